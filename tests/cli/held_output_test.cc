// Held outputs: the CSV of one demo sweep and of one spread, byte for byte, as made by the
// build before the per-point work was cut (docs/performance.md). The speed work may skip
// only what provably cannot change a number, so every digit of these files must stay.
// Regenerate only for a deliberate change of the numbers, and say so in CHANGELOG.md:
//   knee sweep netlists/bridge-rectifier.knee Vin=-20..20:0.1 --format csv
//        --out tests/cli/held/bridge-sweep.csv
//   knee spread tests/cli/held/bridge-spread.knee --samples 200 --format csv
//        --out tests/cli/held/bridge-spread.csv
#include <gtest/gtest.h>

#include <cstdio>
#include <string>

#include "run_knee.h"

namespace knee::testing {
namespace {

// The first line where two texts differ, for a readable failure.
std::string FirstDifference(const std::string& got, const std::string& held) {
  size_t line = 1, start = 0;
  for (size_t i = 0; i < got.size() && i < held.size(); ++i) {
    if (got[i] != held[i]) {
      const size_t end_got = got.find('\n', start), end_held = held.find('\n', start);
      return "line " + std::to_string(line) + ":\n  got  " + got.substr(start, end_got - start) +
             "\n  held " + held.substr(start, end_held - start);
    }
    if (got[i] == '\n') {
      ++line;
      start = i + 1;
    }
  }
  return "lengths " + std::to_string(got.size()) + " and " + std::to_string(held.size());
}

void ExpectHeld(const std::string& args, const std::string& held_file) {
  const std::string out = TempPath("held.csv");
  const KneeRun run = RunKnee(args + " --format csv --quiet --out " + out);
  ASSERT_EQ(run.status, 0) << run.err;
  const std::string got = ReadWhole(out);
  std::remove(out.c_str());
  const std::string held = ReadWhole(SourcePath("tests/cli/held/" + held_file));
  ASSERT_FALSE(held.empty()) << held_file;
  EXPECT_TRUE(got == held) << held_file << ": " << FirstDifference(got, held);
}

TEST(HeldOutput, BridgeSweepCsv) {
  ExpectHeld("sweep " + Netlist("bridge-rectifier.knee") + " Vin=-20..20:0.1", "bridge-sweep.csv");
}

TEST(HeldOutput, BridgeSpreadCsv) {
  ExpectHeld("spread " + SourcePath("tests/cli/held/bridge-spread.knee") + " --samples 200",
             "bridge-spread.csv");
}

}  // namespace
}  // namespace knee::testing
