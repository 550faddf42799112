// The linear tolerance budget: contributions, worst case and root-sum-square total.
#include "sensitivity_budget.h"

#include <gtest/gtest.h>

#include <cmath>
#include <map>

#include "test_util.h"

namespace knee::cli {
namespace {

TEST(SensitivityBudget, ContributionsWorstCaseAndRss) {
  // A divider Vout = V R2/(R1 + R2) at V = 10 V, R1 = R2 = 1 kOhm: dVout/dR1 = -V R2/(R1+R2)^2
  // = -2.5 mV/Ohm, dVout/dR2 = +2.5 mV/Ohm (closed form of the divider).
  const std::map<std::string, double> d = {{"R1", -2.5e-3}, {"R2", 2.5e-3}, {"V1", 0.5}};
  const auto lookup = [&](const std::string& t) -> std::optional<double> {
    auto it = d.find(t);
    if (it == d.end()) return std::nullopt;
    return it->second;
  };
  const std::vector<SpreadEntry> entries = {{"R1", 10.0}, {"R2", 10.0}, {"V1", 0.1}};
  const Budget b = ComputeBudget(entries, lookup);
  ASSERT_EQ(b.contributions.size(), 3u);
  EXPECT_CLOSE(b.contributions[0].contribution, -25e-3, 1e-15, 0.0);
  EXPECT_CLOSE(b.contributions[1].contribution, 25e-3, 1e-15, 0.0);
  EXPECT_CLOSE(b.contributions[2].contribution, 50e-3, 1e-15, 0.0);
  EXPECT_CLOSE(b.worst_case, 100e-3, 1e-15, 0.0);
  EXPECT_CLOSE(b.rss, std::sqrt(2 * 25e-3 * 25e-3 + 50e-3 * 50e-3), 1e-15, 0.0);
}

TEST(SensitivityBudget, UnknownTargetCountsZeroAndEmptyListIsEmpty) {
  const auto none = [](const std::string&) -> std::optional<double> { return std::nullopt; };
  const std::vector<SpreadEntry> entries = {{"Rx", 5.0}};
  const Budget b = ComputeBudget(entries, none);
  ASSERT_EQ(b.contributions.size(), 1u);
  EXPECT_EQ(b.contributions[0].contribution, 0.0);
  EXPECT_EQ(b.worst_case, 0.0);
  const Budget empty = ComputeBudget({}, none);
  EXPECT_TRUE(empty.contributions.empty());
  EXPECT_EQ(empty.worst_case, 0.0);
  EXPECT_EQ(empty.rss, 0.0);
}

}  // namespace
}  // namespace knee::cli
