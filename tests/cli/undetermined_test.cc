// The undetermined-node note and the solver account across commands: silent on every
// demo and on a mains bridge bled by 10 MOhm or 1 GOhm, present where the bleeds are
// 100 GOhm; `knee hand` and `knee bias` give the same account of the same solve.
#include <gtest/gtest.h>

#include <fstream>
#include <nlohmann/json.hpp>
#include <string>

#include "run_knee.h"
#include "test_util.h"

namespace knee::testing {
namespace {

// The mains bridge of the report that the note cried wolf on (invented test circuit).
std::string BleedBridge(const std::string& bleed) {
  return "title \"bridge on " + bleed +
         " bleeds\"\n"
         "part rect diode sat_current=10n ideality=1.75 series_res=0.05 breakdown_v=1000\n"
         "vsource Vin L -> N 325\n"
         "diode D1 L -> pos rect\n"
         "diode D2 N -> pos rect\n"
         "diode D3 neg -> L rect\n"
         "diode D4 neg -> N rect\n"
         "resistor Rload pos -> neg 10k\n"
         "resistor RbN N -> gnd " +
         bleed + "\nresistor RbP pos -> gnd " + bleed + "\nresistor RbM neg -> gnd " + bleed +
         "\nbias\n";
}

KneeRun RunOn(const std::string& command, const std::string& netlist) {
  const std::string path = TempPath("bridge.knee");
  {
    std::ofstream f(path);
    f << netlist;
  }
  KneeRun run = RunKnee(command + " " + path);
  std::remove(path.c_str());
  return run;
}

TEST(Undetermined, BridgeWithTenMegohmOrOneGigohmBleedsHasNoNote) {
  for (const char* bleed : {"10M", "1G"}) {
    const KneeRun run = RunOn("bias", BleedBridge(bleed));
    ASSERT_EQ(run.status, 0) << run.err;
    EXPECT_EQ((run.out + run.err).find("undetermined"), std::string::npos) << bleed << run.out;
    EXPECT_NE(run.out.find("KCL residual"), std::string::npos) << run.out;
  }
}

// Both text reports that show the account carry the note (bias's table, hand's footer).
TEST(Undetermined, BridgeWithHundredGigohmBleedsHasTheNote) {
  for (const char* command : {"bias", "hand"}) {
    const KneeRun run = RunOn(command, BleedBridge("100G"));
    ASSERT_EQ(run.status, 0) << run.err;
    EXPECT_NE(run.out.find("note: nodes 'L', 'N', 'pos' and 'neg' are undetermined"),
              std::string::npos)
        << command << "\n"
        << run.out;
  }
}

TEST(Undetermined, NoDemoHasTheNote) {
  for (const char* demo : {"bridge-rectifier.knee", "diode-or.knee", "input-clamp.knee",
                           "reference-regulator.knee", "rx1a60-bias.knee", "temp-sensor.knee"}) {
    for (const char* command : {"bias", "hand"}) {
      const KneeRun run = RunKnee(std::string(command) + " " + Netlist(demo));
      // ("undetermined" alone also counts the hand models' singular state sets.)
      EXPECT_EQ((run.out + run.err).find("note: node"), std::string::npos)
          << command << " " << demo << "\n"
          << run.out;
    }
  }
}

// One function fills the account: hand's JSON solver block is bias's, field by field.
TEST(SolverAccount, HandAndBiasAgree) {
  for (const char* demo : {"diode-or.knee", "bridge-rectifier.knee", "input-clamp.knee"}) {
    const KneeRun bias = RunKnee("bias --format json " + Netlist(demo));
    const KneeRun hand = RunKnee("hand --format json " + Netlist(demo));
    ASSERT_EQ(bias.status, 0) << bias.err;
    ASSERT_EQ(hand.status, 0) << hand.err;
    const auto b = nlohmann::json::parse(bias.out)["solver"];
    const auto h = nlohmann::json::parse(hand.out)["solver"];
    EXPECT_EQ(b, h) << demo;
    EXPECT_TRUE(b["unique"].get<bool>()) << demo;
  }
}

}  // namespace
}  // namespace knee::testing
