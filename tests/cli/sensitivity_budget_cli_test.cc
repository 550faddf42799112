// knee sensitivity with vary lines: the tolerance budget of a divider against its closed
// form. Vout = V·R2/(R1+R2), so dVout/dR1 = -V·R2/(R1+R2)^2, dVout/dR2 = V·R1/(R1+R2)^2
// and dVout/dV = R2/(R1+R2) (Ohm's law and the chain rule; written out here, not taken
// from knee).
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <string>

#include "run_knee.h"
#include "test_util.h"

namespace knee::testing {
namespace {

constexpr const char* kDivider =
    "vsource V1 in -> gnd 10\n"
    "resistor R1 in -> out 1k\n"
    "resistor R2 out -> gnd 3k\n"
    "vary R1 ±1%\n"
    "vary R2 ±30\n"
    "vary V1 9..11\n"
    "show out.v\n";

TEST(SensitivityBudget, DividerContributionsMatchTheClosedForm) {
  KneeRun run = RunKnee("sensitivity - --format json", kDivider);
  ASSERT_EQ(run.status, 0) << run.err;
  const nlohmann::json budget = nlohmann::json::parse(run.out)["quantities"][0]["budget"];
  ASSERT_TRUE(budget.is_object()) << run.out;
  const double v = 10, r1 = 1e3, r2 = 3e3, sum = r1 + r2;
  const double expected[] = {-v * r2 / (sum * sum) * 10,  // R1: ±1 % of 1 kOhm = ±10 Ohm
                             v * r1 / (sum * sum) * 30,   // R2: ±30 Ohm
                             r2 / sum * 1.0};             // V1: 9..11 V = ±1 V
  ASSERT_EQ(budget["contributions"].size(), 3u);
  double worst = 0, squares = 0;
  for (size_t k = 0; k < 3; ++k) {
    EXPECT_CLOSE(budget["contributions"][k]["contribution"].get<double>(), expected[k], 1e-12,
                 1e-15);
    worst += std::fabs(expected[k]);
    squares += expected[k] * expected[k];
  }
  EXPECT_CLOSE(budget["worst_case"].get<double>(), worst, 1e-12, 1e-15);
  EXPECT_CLOSE(budget["rss"].get<double>(), std::sqrt(squares), 1e-12, 1e-15);
}

// Without vary lines there is no budget (silent both ways).
TEST(SensitivityBudget, NoVaryLinesNoBudget) {
  KneeRun run = RunKnee("sensitivity - --format json",
                        "vsource V1 in -> gnd 10\nresistor R1 in -> out 1k\n"
                        "resistor R2 out -> gnd 3k\nshow out.v\n");
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_TRUE(nlohmann::json::parse(run.out)["quantities"][0]["budget"].is_null()) << run.out;
  KneeRun table = RunKnee("sensitivity -", kDivider);
  EXPECT_NE(table.out.find("tolerance budget (linear)"), std::string::npos) << table.out;
}

}  // namespace
}  // namespace knee::testing
