// The residual's analytic derivatives against central finite differences, at forward,
// reverse-leakage and breakdown points, at and away from the reference temperature.
#include "fit_law.h"

#include <gtest/gtest.h>

#include <cmath>

#include "test_util.h"

namespace knee::fit_internal {
namespace {

Params Sample() {
  DiodeModel m;
  m.sat_current = 3e-9;
  m.ideality = 1.7;
  m.series_res = 0.08;
  m.breakdown_v = 60;
  m.breakdown_i = 2e-4;
  m.breakdown_ideality = 1.4;
  m.breakdown_tc = 7e-4;
  m.bandgap = 1.12;
  m.sat_temp_exp = 3;
  return ToParams(m);
}

TEST(FitLaw, DerivativesMatchCentralDifferences) {
  const Params x = Sample();
  struct At {
    double v, i, temp;
  };
  // Measured currents near the model's own, so that every residual is defined.
  for (const At& at : {At{0.45, 1e-6, 25}, At{0.9, 0.8, 85}, At{1.4, 3.0, -40}, At{-5, -2.9e-9, 25},
                       At{-60.05, -3e-4, 25}, At{-64, -5e-3, 125}}) {
    FitPoint p;
    p.v = at.v, p.i = at.i, p.temp = at.temp, p.weight = 1.3;
    double r = 0;
    std::array<double, kFitKeyCount> g{};
    ASSERT_TRUE(PointResidual(x, true, 25, p, &r, &g)) << at.v;
    for (int k = 0; k < kFitKeyCount; ++k) {
      const double h = 1e-4 * std::max(1e-3, std::fabs(x[k]));
      Params up = x, down = x;
      up[k] += h, down[k] -= h;
      double ru = 0, rd = 0;
      ASSERT_TRUE(PointResidual(up, true, 25, p, &ru, nullptr));
      ASSERT_TRUE(PointResidual(down, true, 25, p, &rd, nullptr));
      const double numeric = (ru - rd) / (2 * h);
      EXPECT_CLOSE(g[k], numeric, 1e-5, 1e-7)
          << "key " << FitKeyName(static_cast<FitKey>(k)) << " at v = " << at.v;
    }
  }
}

// The model's voltage at a current and its current at a voltage are inverse to each other.
TEST(FitLaw, VoltageAndCurrentAreInverse) {
  const DiodeModel m = FromParams(Sample(), DiodeModel{}, true);
  for (double temp : {-40.0, 25.0, 125.0}) {
    for (double i : {1e-7, 1e-3, 0.5, 3.0, -1e-4, -1e-2}) {
      const double v = ModelVoltage(m, i, temp);
      EXPECT_CLOSE(ModelCurrent(m, v, temp), i, 1e-9, 0) << "i = " << i << " at " << temp;
    }
  }
}

}  // namespace
}  // namespace knee::fit_internal
