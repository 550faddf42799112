// The fit against points generated from known parameters (issue 16, acceptance 1, 2, 4).
#include "knee/fit.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>

#include "fit_law.h"
#include "fit_points.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::MakeData;
using testing::Spec;
using testing::Truth;

double TruthOf(const Truth& t, FitKey key) {
  switch (key) {
    case FitKey::kSatCurrent:
      return t.is;
    case FitKey::kIdeality:
      return t.n;
    case FitKey::kSeriesRes:
      return t.rs;
    case FitKey::kBreakdownV:
      return t.bv;
    case FitKey::kBreakdownI:
      return t.ibr;
    case FitKey::kBreakdownIdeality:
      return t.nbr;
    case FitKey::kBreakdownTc:
      return t.tc;
    case FitKey::kBandgap:
      return t.eg;
    case FitKey::kSatTempExp:
      return t.temp_exp;
  }
  return 0;
}

// The part every fit starts from: the truth's held values written explicitly, so that no
// test depends on a default (bandgap's default is not assumed anywhere here).
FitOptions OptionsFor(const Truth& t) {
  FitOptions o;
  o.model.bandgap = t.eg;
  o.model.sat_temp_exp = t.temp_exp;
  o.model.breakdown_i = t.ibr;
  o.model.ref_temp = t.t0;
  if (t.breakdown) o.held[static_cast<int>(FitKey::kBreakdownI)] = true;
  return o;
}

std::vector<FitKey> Fitted(const FitResult& r) {
  std::vector<FitKey> keys;
  for (const FittedKey& k : r.keys) keys.push_back(k.key);
  return keys;
}

struct Case {
  const char* name;
  bool breakdown;
  std::vector<double> temps;
  std::vector<FitKey> expected_keys;
};

class NoiseFree : public ::testing::TestWithParam<Case> {};

// Acceptance 1: noise-free points, every fitted key within 1e-6 relative of the truth.
TEST_P(NoiseFree, RecoversTheTruth) {
  const Case& c = GetParam();
  Truth truth;
  truth.breakdown = c.breakdown;
  Spec spec;
  spec.temps = c.temps;
  if (c.breakdown) spec.breakdown_currents = {100e-6, 1e-3, 10e-3, 50e-3};
  const FitData data = MakeData(truth, spec);
  Result<FitResult> r = FitDiode(data, OptionsFor(truth));
  ASSERT_TRUE(r.ok()) << r.errors().front().message;
  ASSERT_TRUE(r->converged) << r->termination;
  EXPECT_EQ(Fitted(*r), c.expected_keys);
  EXPECT_TRUE(r->undetermined.empty());
  double worst = 0;
  for (const FittedKey& k : r->keys) {
    EXPECT_CLOSE(k.value, TruthOf(truth, k.key), 1e-6, 0) << FitKeyName(k.key);
    worst = std::max(worst, std::fabs(k.value / TruthOf(truth, k.key) - 1));
  }
  std::printf("%s: largest relative error %.2e over %zu keys, %d iterations\n", c.name, worst,
              r->keys.size(), r->iterations);
}

const std::vector<FitKey> kForward = {FitKey::kSatCurrent, FitKey::kIdeality, FitKey::kSeriesRes};
const std::vector<FitKey> kBreakdown = {FitKey::kSatCurrent, FitKey::kIdeality, FitKey::kSeriesRes,
                                        FitKey::kBreakdownV, FitKey::kBreakdownIdeality};
const std::vector<FitKey> kForwardT = {FitKey::kSatCurrent, FitKey::kIdeality, FitKey::kSeriesRes,
                                       FitKey::kBandgap, FitKey::kSatTempExp};
const std::vector<FitKey> kBreakdownT = {
    FitKey::kSatCurrent,        FitKey::kIdeality,    FitKey::kSeriesRes, FitKey::kBreakdownV,
    FitKey::kBreakdownIdeality, FitKey::kBreakdownTc, FitKey::kBandgap,   FitKey::kSatTempExp};

INSTANTIATE_TEST_SUITE_P(
    Acceptance1, NoiseFree,
    ::testing::Values(Case{"forward_one_temp", false, {25}, kForward},
                      Case{"breakdown_one_temp", true, {25}, kBreakdown},
                      Case{"forward_three_temps", false, {-40, 25, 125}, kForwardT},
                      Case{"breakdown_three_temps", true, {-40, 25, 125}, kBreakdownT}),
    [](const ::testing::TestParamInfo<Case>& p) { return std::string(p.param.name); });

// Acceptance 2: 1 % multiplicative noise on the currents, seeds 1..400 fixed: each key's
// 95 % interval covers the truth in [low, high] % of the seeds. With exact 95 % coverage
// the share of 400 seeds has a binomial standard deviation of 1.09 %, so 93-97 % holds
// with probability about 0.93 per key; the eight-key set is held to the 99.9 % band of
// that binomial (95 +- 3.6 %) instead, and its figures are in docs/fit.md.
void CountCoverage(const Truth& truth, const Spec& spec, double low, double high) {
  const FitData clean = MakeData(truth, spec);
  constexpr int kSeeds = 400;
  std::array<int, kFitKeyCount> covered{}, seen{};
  for (unsigned seed = 1; seed <= kSeeds; ++seed) {
    Result<FitResult> r = FitDiode(testing::WithNoise(clean, seed), OptionsFor(truth));
    ASSERT_TRUE(r.ok()) << "seed " << seed << ": " << r.errors().front().message;
    ASSERT_TRUE(r->converged) << "seed " << seed << ": " << r->termination;
    ASSERT_TRUE(r->undetermined.empty()) << "seed " << seed;
    for (const FittedKey& k : r->keys) {
      ASSERT_TRUE(k.low && k.high);
      const double t = TruthOf(truth, k.key);
      ++seen[static_cast<int>(k.key)];
      if (*k.low <= t && t <= *k.high) ++covered[static_cast<int>(k.key)];
    }
  }
  for (int k = 0; k < kFitKeyCount; ++k) {
    if (seen[k] == 0) continue;
    EXPECT_EQ(seen[k], kSeeds);
    const double share = 100.0 * covered[k] / kSeeds;
    std::printf("%s: covered in %d of %d seeds (%.2f %%)\n", FitKeyName(static_cast<FitKey>(k)),
                covered[k], kSeeds, share);
    EXPECT_GE(share, low) << FitKeyName(static_cast<FitKey>(k));
    EXPECT_LE(share, high) << FitKeyName(static_cast<FitKey>(k));
  }
}

// A fit stopped before it converges says so (the command's exit status 1), and the same
// points fit when the iterations are allowed.
TEST(Fit, StoppedEarlyIsNotConverged) {
  const FitData data = MakeData(Truth{}, Spec{});
  FitOptions o = OptionsFor(Truth{});
  o.max_iterations = 1;
  Result<FitResult> r = FitDiode(data, o);
  ASSERT_TRUE(r.ok());
  EXPECT_FALSE(r->converged);
  o.max_iterations = 500;
  r = FitDiode(data, o);
  ASSERT_TRUE(r.ok());
  EXPECT_TRUE(r->converged) << r->termination;
}

// Two temperatures fix one temperature key: sat_temp_exp is named and held, bandgap fitted.
TEST(Fit, TwoTemperaturesDetermineOneTemperatureKey) {
  Spec spec;
  spec.temps = {25, 100};
  Result<FitResult> r = FitDiode(MakeData(Truth{}, spec), OptionsFor(Truth{}));
  ASSERT_TRUE(r.ok());
  ASSERT_EQ(r->undetermined.size(), 1u);
  EXPECT_EQ(r->undetermined[0].key, FitKey::kSatTempExp);
  EXPECT_NE(r->undetermined[0].why.find("only together"), std::string::npos);
  for (const FittedKey& k : r->keys) {
    EXPECT_CLOSE(k.value, TruthOf(Truth{}, k.key), 1e-6, 0) << FitKeyName(k.key);
  }
}

TEST(Coverage, ForwardOneTemperature) {
  Spec spec;
  spec.forward_per_temp = 30;
  CountCoverage(Truth{}, spec, 93, 97);
}

TEST(Coverage, BreakdownThreeTemperatures) {
  Truth truth;
  truth.breakdown = true;
  Spec spec;
  spec.temps = {-40, 25, 125};
  spec.forward_per_temp = 20;
  spec.breakdown_currents = {100e-6, 300e-6, 1e-3, 3e-3, 10e-3, 50e-3};
  CountCoverage(truth, spec, 91.4, 98.6);
}

}  // namespace
}  // namespace knee
