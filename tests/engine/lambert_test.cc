// A diode (optionally with series resistance) driven from a voltage source through a
// resistor, against the exact solution in terms of the Lambert W function (T. C. Banwell
// and A. Jayakumar, "Exact analytical solution for current flow through diode with series
// resistance", Electronics Letters 36(4), 2000):
//   I = (n Vt / R) W((Is R / (n Vt)) exp((V + Is R) / (n Vt))) - Is,
// with R the total series resistance (external plus series_res/area). W is evaluated with
// Boost.Math's lambert_w0 where its argument fits a double, and by Newton's method on the
// logarithmic form w + ln w = y (y = ln of the argument) where exp(y) would overflow.
#include <gtest/gtest.h>

#include <boost/math/special_functions/lambert_w.hpp>
#include <cmath>
#include <vector>

#include "circuit_builder.h"
#include "knee/diode_law.h"
#include "knee/solver.h"
#include "test_util.h"

namespace knee {
namespace {

// The bandgap of a part that gives none: silicon at 300 K, 1.12 eV (S. M. Sze, K. K. Ng,
// Physics of Semiconductor Devices, 3rd ed., 2007; the netlist contract's default).
constexpr double kDefaultBandgap = 1.12;

// CODATA 2018 exact constants (SI 2019), written out here independently of the engine.
constexpr double kK = 1.380649e-23;
constexpr double kQ = 1.602176634e-19;

// W0(exp(y)).
double LambertW0OfExp(double y) {
  if (y < 700.0) return boost::math::lambert_w0(std::exp(y));
  double w = y - std::log(y);  // asymptotic start
  for (int k = 0; k < 100; ++k) {
    const double step = (w + std::log(w) - y) / (1.0 + 1.0 / w);
    w -= step;
    if (std::fabs(step) <= 1e-16 * w) break;
  }
  return w;
}

double ExactCurrent(double v, double r_total, double is, double n_vt) {
  const double y = std::log(is * r_total / n_vt) + (v + is * r_total) / n_vt;
  return n_vt / r_total * LambertW0OfExp(y) - is;
}

// The contract's temperature law (netlist-format.md), written out independently.
double SatCurrent(double is0, double n, double eg, double temp_exp, double t0_c, double t_c) {
  const double t = t_c + 273.15, t0 = t0_c + 273.15;
  const double vt0 = kK * t0 / kQ;
  return is0 * std::pow(t / t0, temp_exp / n) * std::exp(eg / (n * vt0) * (1.0 - t0 / t));
}

struct LambertCase {
  double series_res;
  double area;
  double ideality;
};

class LambertTest : public ::testing::TestWithParam<LambertCase> {};

TEST_P(LambertTest, CurrentMatchesLambertW) {
  const LambertCase p = GetParam();
  const double r_ext = 1e3;
  DiodeModel model;
  model.sat_current = 3e-14;
  model.ideality = p.ideality;
  model.series_res = p.series_res;
  const std::vector<double> volts = {-5,   -3,   -1,  -0.5, -0.2, -0.05, -0.01, 0,
                                     0.01, 0.05, 0.2, 0.4,  0.55, 0.65,  0.7,   0.8,
                                     1.0,  2.0,  5.0, 10,   20,   30,    40,    50};
  for (const double temp : {-40.0, 25.0, 125.0}) {
    const double n_vt = p.ideality * kK * (temp + 273.15) / kQ;
    const double is = p.area * SatCurrent(3e-14, p.ideality, kDefaultBandgap, 3.0, 25.0, temp);
    const double r_total = r_ext + p.series_res / p.area;
    for (const double v : volts) {
      testing::CircuitBuilder b(temp);
      const int part = b.Part("P", model);
      b.V("V1", "in", "gnd", v);
      b.R("R1", "in", "a", r_ext);
      const int d = b.D("D1", "a", "gnd", part, p.area);
      auto solver = BiasSolver::Create(b.circuit(), {});
      ASSERT_TRUE(solver.ok());
      Solution s;
      const SolveSummary summary = (*solver)->Solve(&s);
      ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
      const double expected = ExactCurrent(v, r_total, is, n_vt);
      // 1e-9 relative; the absolute floor of 1e-21 A only matters within about 1e-8 V of
      // zero bias, where the current itself goes through zero and a relative test has no
      // meaning (both sides then carry round-off of order 1e-16 * Is ~ 1e-30 A).
      EXPECT_CLOSE(s.element_current[d], expected, 1e-9, 1e-21)
          << "V = " << v << " V, T = " << temp << " degC";
      EXPECT_CLOSE(s.element_voltage[d], v - expected * r_ext, 1e-9, 1e-15)
          << "V = " << v << " V, T = " << temp << " degC";
    }
  }
}

// A Zener clamp: the source pushes current backwards through the diode into breakdown.
// With u = -(Vj + Vbr), the breakdown term is Ibr exp(u / (nbr Vt)), the same exponential
// form as the forward law with Is -> Ibr and no "-1"; so the clamp current follows the
// same Lambert W solution (Banwell & Jayakumar 2000). Deep in reverse the forward term is
// exactly -Is (exp(-Vbr/(n Vt)) < 1e-45), a constant that shifts the source voltage by
// Is R, so the clamp current is
//   I = Is + (nbr Vt / R) W((Ibr R / (nbr Vt)) exp((V - Vbr - Is R) / (nbr Vt))).
// (Is reaches ~1e-10 A at 125 degC: leaving it out would be a 1e-9-level error.)
TEST(LambertBreakdown, ZenerClampCurrentMatchesLambertW) {
  for (const double series_res : {0.0, 3.0}) {
    DiodeModel model;
    model.sat_current = 1e-15;
    model.series_res = series_res;
    model.breakdown_v = 3.6;
    model.breakdown_i = 5e-3;
    model.breakdown_ideality = 1.5;
    model.breakdown_tc = -4e-4;
    for (const double temp : {-40.0, 25.0, 125.0}) {
      const double nbr_vt = 1.5 * kK * (temp + 273.15) / kQ;
      const double vbr = 3.6 * (1.0 - 4e-4 * (temp - 25.0));
      const double r_total = 470.0 + series_res;
      for (const double v : {4.5, 5.0, 8.0, 12.0, 24.0, 50.0}) {
        testing::CircuitBuilder b(temp);
        const int part = b.Part("Z", model);
        b.V("V1", "in", "gnd", v);
        b.R("R1", "in", "k", 470.0);
        const int z = b.D("Z1", "gnd", "k", part);
        auto solver = BiasSolver::Create(b.circuit(), {});
        ASSERT_TRUE(solver.ok());
        Solution s;
        const SolveSummary summary = (*solver)->Solve(&s);
        ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
        const double is = SatCurrent(1e-15, 1.0, kDefaultBandgap, 3.0, 25.0, temp);
        const double y = std::log(5e-3 * r_total / nbr_vt) + (v - vbr - is * r_total) / nbr_vt;
        const double expected = is + nbr_vt / r_total * LambertW0OfExp(y);
        EXPECT_CLOSE(-s.element_current[z], expected, 1e-9, 0.0)
            << "V = " << v << " V, T = " << temp << " degC, series_res " << series_res;
      }
    }
  }
}

INSTANTIATE_TEST_SUITE_P(Diodes, LambertTest,
                         ::testing::Values(LambertCase{0.0, 1.0, 1.0}, LambertCase{0.0, 4.0, 1.8},
                                           LambertCase{2.0, 1.0, 1.0}, LambertCase{5.0, 2.0, 1.3}));

// The diode device solves its own series resistance (JunctionVoltageAt): at terminal
// voltage V the junction's current must be the Lambert W current with R = series_res
// alone, from any starting guess (far below, far above, at the answer, not finite, where
// the law's conductance overflows).
TEST(JunctionVoltageAt, CurrentMatchesLambertWFromAnyGuess) {
  DiodeModel model;
  model.sat_current = 2e-13;
  model.ideality = 1.6;
  model.series_res = 0.35;
  const double temp = 40.0;
  const DiodeConstants d = ComputeDiodeConstants(model, 1.0, temp);
  const double n_vt = model.ideality * kK * (temp + 273.15) / kQ;
  const double is = SatCurrent(model.sat_current, model.ideality, model.bandgap, model.sat_temp_exp,
                               model.ref_temp, temp);
  for (double v : {-400.0, -5.0, -0.01, 0.0, 1e-9, 0.3, 0.6, 0.9, 2.0, 30.0, 4000.0}) {
    const double exact = ExactCurrent(v, model.series_res, is, n_vt);
    // 31.85 V: the current there is a double (e^708 A) but its conductance is not.
    for (double guess :
         {0.0, -1e4, 1e4, v, std::nan(""), 1e138, -1e138, 1e300, -1e300, 31.85, -31.85}) {
      const double vj = JunctionVoltageAt(d, v, guess);
      const double current = EvaluateJunction(d, vj).current;
      // Relative 1e-10 (the round-off of v = vj + rs*I amplified by the junction's
      // slope), floor 1e-24 A where the current is Is-sized.
      EXPECT_CLOSE(current, exact, 1e-10, 1e-24) << "v " << v << " guess " << guess;
      EXPECT_NEAR(vj + model.series_res * current, v, 1e-12 * (1.0 + std::fabs(v)));
    }
  }
}

}  // namespace
}  // namespace knee
