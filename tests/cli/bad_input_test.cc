// Every kind of malformed input ends with exit status 2 and a file:line:column message,
// never a crash or a report (issue acceptance list of the foundation).
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "run_knee.h"

namespace knee::testing {
namespace {

struct BadInput {
  const char* name;
  std::string text;
  const char* place;  // expected "<stdin>:LINE:COLUMN" prefix, or "<stdin>" alone
};

const std::string kGood = "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n";

std::vector<BadInput> Cases() {
  return {
      {"unknown keyword", "resistr R1 a -> gnd 1k\n", "<stdin>:1:1"},
      {"missing arrow", "vsource V1 a gnd 5\n", "<stdin>:1:14"},
      {"unknown part", kGood + "diode D1 a -> gnd nopart\n", "<stdin>:3:19"},
      {"unknown node in show", kGood + "show b.v\n", "<stdin>:3:6"},
      {"unknown part key", "part P diode sat_curent=1n\n" + kGood, "<stdin>:1:14"},
      {"duplicate name", kGood + "resistor R1 a -> gnd 2k\n", "<stdin>:3:10"},
      {"malformed number", "vsource V1 a -> gnd 4k7k\nresistor R1 a -> gnd 1k\n", "<stdin>:1:"},
      {"misplaced unit", "vsource V1 a -> gnd 5mA\nresistor R1 a -> gnd 1k\n", "<stdin>:1:"},
      {"unclosed parenthesis", "vsource V1 a -> gnd (2 * 3\nresistor R1 a -> gnd 1k\n",
       "<stdin>:1:"},
      {"unclosed string", "title \"clamp\n" + kGood, "<stdin>:1:7"},
      {"param cycle", "param x = y\nparam y = x\n" + kGood, "<stdin>:1:"},
      {"undefined param", "vsource V1 a -> gnd Vsupply\nresistor R1 a -> gnd 1k\n", "<stdin>:1:21"},
      {"zero resistance", "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 0\n", "<stdin>:2:22"},
      {"negative resistance", "vsource V1 a -> gnd 5\nresistor R1 a -> gnd -1k\n", "<stdin>:2:"},
      {"out-of-range part value", "part P diode ideality=0\n" + kGood + "diode D1 a -> gnd P\n",
       "<stdin>:1:"},
      {"floating subnetwork", kGood + "resistor R2 x -> y 1k\n", "<stdin>:3:"},
      {"loop of voltage sources", kGood + "vsource V2 a -> gnd 3\n", "<stdin>:"},
      {"cut set of current sources",
       kGood + "isource I1 a -> b 1m\nresistor R2 b -> c 1k\n"
               "isource I2 c -> gnd 1m\n",
       "<stdin>:"},
      {"empty file", "", "<stdin>"},
      {"comments only", "# nothing here\n\n", "<stdin>"},
      {"binary bytes",
       std::string("\x7f"
                   "ELF\x02\x01\x01\xff\xfe",
                   9),
       "<stdin>:1:"},
      {"non-UTF-8 text", "title \"caf\xe9\"\n" + kGood, "<stdin>:1:"},
      {"NUL byte", std::string("vsource V1 a -> gnd 5\0\n", 23) + kGood, "<stdin>:1:"},
      {"overlong line", "# " + std::string(20000, 'x') + "\n" + kGood, "<stdin>:1:"},
      {"deeply nested parentheses",
       "vsource V1 a -> gnd " + std::string(100000, '(') + "1" + std::string(100000, ')') +
           "\nresistor R1 a -> gnd 1k\n",
       "<stdin>:1:"},
      {"element between one node", kGood + "resistor R2 a -> a 1k\n", "<stdin>:3:"},
  };
}

TEST(BadInput, EveryKindExitsTwoWithALocation) {
  for (const BadInput& c : Cases()) {
    KneeRun run = RunKnee("bias - --format csv", c.text);
    EXPECT_EQ(run.status, 2) << c.name << "\n" << run.err;
    EXPECT_TRUE(run.out.empty()) << c.name << ": a report was printed";
    EXPECT_EQ(run.err.rfind(c.place, 0), 0u)
        << c.name << ": expected " << c.place << " at the start of:\n"
        << run.err;
    EXPECT_NE(run.err.find("error: "), std::string::npos) << c.name;
  }
}

TEST(BadInput, ASuggestionWhereANearNameExists) {
  KneeRun run = RunKnee("bias - --show R1.j,V1.i", kGood);
  EXPECT_EQ(run.status, 2);
  KneeRun typo = RunKnee("bias - --show a.v,R2.i", kGood);
  EXPECT_EQ(typo.status, 2);
  EXPECT_NE(typo.err.find("did you mean 'R1'"), std::string::npos) << typo.err;
}

}  // namespace
}  // namespace knee::testing
