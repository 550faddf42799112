// The diode law (diode_law.h): constants, temperature laws, the overflow-safe
// exponential, and analytic derivatives against central finite differences.
#include <gtest/gtest.h>

#include <cmath>

#include "devices.h"
#include "knee/diode_law.h"
#include "test_util.h"

namespace knee {
namespace {

// Thermal voltage kT/q at 27 degC (300.15 K) is 25.865 mV with the CODATA 2018 exact
// values of k and q (also the figure quoted in common practice). The quoted value has
// five significant digits, hence the 2e-5 relative tolerance.
TEST(DiodeLaw, ThermalVoltageAt27C) {
  EXPECT_CLOSE(ThermalVoltage(ToKelvin(27.0)), 25.865e-3, 2e-5, 0.0);
  // CODATA 2018: k = 1.380649e-23 J/K and e = 1.602176634e-19 C, both exact.
  EXPECT_EQ(kBoltzmann, 1.380649e-23);
  EXPECT_EQ(kElementaryCharge, 1.602176634e-19);
}

// Is(T) per the contract (netlist-format.md), written here in product form, independently
// of the engine's log-domain evaluation.
TEST(DiodeLaw, SaturationCurrentTemperatureLaw) {
  DiodeModel m;
  m.sat_current = 2.5e-9;
  m.ideality = 1.8;
  m.bandgap = 1.11;
  m.sat_temp_exp = 3.0;
  m.ref_temp = 25.0;
  EXPECT_CLOSE(SatCurrentAt(m, 25.0), 2.5e-9, 1e-15, 0.0);
  for (const double t_c : {-55.0, -40.0, 0.0, 85.0, 125.0, 150.0}) {
    const double t = t_c + 273.15, t0 = 298.15;
    const double vt0 = 1.380649e-23 * t0 / 1.602176634e-19;
    const double expected =
        2.5e-9 * std::pow(t / t0, 3.0 / 1.8) * std::exp(1.11 / (1.8 * vt0) * (1.0 - t0 / t));
    EXPECT_CLOSE(SatCurrentAt(m, t_c), expected, 1e-12, 0.0) << t_c;
  }
  // Area multiplies Is and breakdown_i and divides series_res (the contract).
  m.series_res = 6.0;
  m.breakdown_v = 100.0;
  m.breakdown_i = 1e-4;
  const DiodeConstants d = ComputeDiodeConstants(m, 3.0, 25.0);
  EXPECT_CLOSE(d.is, 7.5e-9, 1e-15, 0.0);
  EXPECT_CLOSE(d.ibr, 3e-4, 1e-15, 0.0);
  EXPECT_CLOSE(d.rs, 2.0, 1e-15, 0.0);
  EXPECT_CLOSE(d.n_vt, 1.8 * ThermalVoltage(298.15), 1e-15, 0.0);
}

// Vbr(T) = breakdown_v (1 + breakdown_tc (T - T0)) (the contract's law).
TEST(DiodeLaw, BreakdownVoltageTemperatureLaw) {
  DiodeModel m;
  m.breakdown_v = 3.6;
  m.breakdown_tc = -4e-4;
  m.ref_temp = 20.0;
  EXPECT_CLOSE(BreakdownVoltageAt(m, 20.0), 3.6, 1e-15, 0.0);
  EXPECT_CLOSE(BreakdownVoltageAt(m, 120.0), 3.6 * (1.0 - 4e-4 * 100.0), 1e-15, 0.0);
}

// Far beyond any old cap the law is still the law: at an exponent of 300 the current
// is is*(e^300 - 1) (e^300 = 1.94e130), and the conductance is/(n*Vt)*e^300; beyond the
// largest double the current is +inf, not a stand-in value.
TEST(DiodeLaw, JunctionIsExactUpToTheLargestDouble) {
  DiodeModel m;
  m.sat_current = 1e-14;
  m.ideality = 1.0;
  const DiodeConstants d = ComputeDiodeConstants(m, 1.0, 25.0);
  const JunctionPoint p = EvaluateJunction(d, 300.0 * d.n_vt);
  EXPECT_CLOSE(p.current, d.is * std::exp(300.0), 1e-13, 0.0);
  EXPECT_CLOSE(p.conductance, d.is / d.n_vt * std::exp(300.0), 1e-13, 0.0);
  // ln(is) = -32.2: the term leaves the doubles at an exponent of 709.78 + 32.2.
  EXPECT_TRUE(std::isfinite(EvaluateJunction(d, 735.0 * d.n_vt).current));
  EXPECT_CLOSE(EvaluateJunction(d, 735.0 * d.n_vt).current, std::exp(d.log_is + 735.0), 1e-12, 0.0);
  EXPECT_EQ(EvaluateJunction(d, 745.0 * d.n_vt).current, HUGE_VAL);
  EXPECT_CLOSE(LogJunctionCurrent(d, 745.0 * d.n_vt), d.log_is + 745.0, 1e-15, 0.0);
}

// At 4.15 K (-269 C) area*Is(T) is about e^-3100, far below the smallest double (the
// contract's law (4) with Eg = 1.11 eV): the law is carried by its logarithm, and a
// forward junction carries ordinary currents.
TEST(DiodeLaw, ColdJunctionKeepsTheLawInLogarithms) {
  DiodeModel m;
  m.sat_current = 1e-14;
  m.ideality = 1.0;
  m.bandgap = 1.11;
  m.sat_temp_exp = 3.0;
  m.ref_temp = 25.0;
  const double t = -269.0;
  const DiodeConstants d = ComputeDiodeConstants(m, 1.0, t);
  EXPECT_EQ(d.is, 0.0);
  const double tk = t + 273.15, t0 = 298.15;
  const double vt0 = ThermalVoltage(t0);
  const double log_is = std::log(1e-14) + 3.0 * std::log(tk / t0) + 1.11 / vt0 * (1 - t0 / tk);
  EXPECT_CLOSE(d.log_is, log_is, 1e-14, 0.0);
  EXPECT_CLOSE(LogSatCurrentAt(m, t), log_is, 1e-14, 0.0);
  // 1 mA: vj = n*Vt*(ln(1e-3) - ln is), and the law gives 1 mA back.
  const double vj = d.n_vt * (std::log(1e-3) - d.log_is);
  EXPECT_CLOSE(EvaluateJunction(d, vj).current, 1e-3, 1e-12, 0.0);
  EXPECT_CLOSE(EvaluateJunction(d, vj).conductance, 1e-3 / d.n_vt, 1e-12, 0.0);
  EXPECT_GT(vj, 1.0);
  EXPECT_LT(vj, 1.2);
  // Series resistance: the junction voltage at a terminal voltage far above the knee.
  // v = vj + rs*I holds to the law's own rounding there: I carries |ln I|*eps of its
  // exponent (3100 ulps), about 3.4e-13 of rs*I.
  DiodeConstants r = d;
  r.rs = 10.0;
  JunctionPoint at;
  const double v = 5.0;
  const double vjr = JunctionVoltageAt(r, v, 0.0, &at);
  EXPECT_CLOSE(vjr + r.rs * at.current, v, 1e-11, 0.0);
  EXPECT_GT(at.current, 0.38);
  // And a start where the law overflows (v = 1 kV: e^(2.8e6) at the terminal voltage).
  const double vjk = JunctionVoltageAt(r, 1000.0, 1000.0, &at);
  EXPECT_CLOSE(vjk + r.rs * at.current, 1000.0, 1e-11, 0.0);
  EXPECT_TRUE(std::isfinite(at.current));
}

DiodeConstants Zener() {
  DiodeModel m;
  m.sat_current = 1e-14;
  m.ideality = 1.2;
  m.breakdown_v = 5.1;
  m.breakdown_i = 2e-3;
  m.breakdown_ideality = 1.5;
  return ComputeDiodeConstants(m, 2.0, 25.0);
}

// dI/dVj against a central difference (standard numerical differentiation). Truncation
// error ~ (h/nVt)^2/6 and round-off ~ eps*|I|/h; the bound allows both.
void ExpectDerivativeMatches(const DiodeConstants& d, double vj, const char* where) {
  const double h = 1e-5 * std::min(d.n_vt, d.has_breakdown ? d.nbr_vt : d.n_vt);
  const JunctionPoint p = EvaluateJunction(d, vj);
  const double fd =
      (EvaluateJunction(d, vj + h).current - EvaluateJunction(d, vj - h).current) / (2 * h);
  const double round_off = 8 * 2.2e-16 * std::fabs(p.current) / h;
  EXPECT_CLOSE(p.conductance, fd, 1e-7, round_off) << where << " vj = " << vj;
  EXPECT_GT(p.conductance, 0.0) << where;
}

TEST(DiodeLaw, JunctionDerivativeMatchesFiniteDifferences) {
  const DiodeConstants d = Zener();
  ExpectDerivativeMatches(d, -0.1, "reverse");
  ExpectDerivativeMatches(d, -2.0, "deep reverse");  // slope below round-off: floor applies
  ExpectDerivativeMatches(d, 0.55, "knee");
  ExpectDerivativeMatches(d, 0.8, "forward");
  ExpectDerivativeMatches(d, -d.vbr, "breakdown");
  ExpectDerivativeMatches(d, -d.vbr - 0.2, "deep breakdown");
  ExpectDerivativeMatches(d, 95 * d.n_vt, "far forward");
  ExpectDerivativeMatches(d, -d.vbr - 95 * d.nbr_vt, "far breakdown");
  ExpectDerivativeMatches(d, 600 * d.n_vt, "forward, beyond exp's own range of the term");
}

// The junction current itself: Shockley's law (Shockley 1949) plus the contract's
// breakdown term, evaluated by hand.
TEST(DiodeLaw, JunctionCurrentFollowsTheLaw) {
  const DiodeConstants d = Zener();
  const double v = 0.62;
  const double expected =
      d.is * (std::exp(v / d.n_vt) - 1) - d.ibr * std::exp(-(v + d.vbr) / d.nbr_vt);
  EXPECT_CLOSE(EvaluateJunction(d, v).current, expected, 1e-13, 0.0);
  // At -Vbr the breakdown term carries exactly ibr (the contract's definition).
  EXPECT_CLOSE(EvaluateJunction(d, -d.vbr).current, -d.ibr - d.is, 1e-13, 0.0);
}

// A search given the law at its start (the caller's last point) is the search that
// evaluates it there: the same junction voltage and point, bit for bit, and the point is
// the law's at the returned voltage (common practice, no source: a cache must not change
// what it caches).
TEST(DiodeLaw, JunctionSearchFromAKnownPointIsTheSameSearch) {
  DiodeConstants d = Zener();
  d.rs = 0.05;
  int searches = 0;
  for (double v : {-7.0, -5.3, -1.0, 0.0, 0.3, 0.65, 0.9, 2.0, 20.0}) {
    for (double guess : {0.0, -5.2, 0.6, 0.75, v}) {
      JunctionPoint plain, known_start;
      const double a = JunctionVoltageAt(d, v, guess, &plain);
      const JunctionPoint at_guess = EvaluateJunction(d, guess);
      const double b = JunctionVoltageAt(d, v, guess, &known_start, &at_guess);
      EXPECT_EQ(a, b) << v << " from " << guess;
      EXPECT_EQ(plain.current, known_start.current) << v << " from " << guess;
      EXPECT_EQ(plain.conductance, known_start.conductance) << v << " from " << guess;
      EXPECT_EQ(plain.current, EvaluateJunction(d, a).current) << v << " from " << guess;
      EXPECT_CLOSE(a + d.rs * plain.current, v, 1e-12, 1e-12) << v << " from " << guess;
      ++searches;
    }
  }
  EXPECT_EQ(searches, 45);
}

// Junction limiting: steps below the critical voltage pass untouched; large rising steps
// above it become logarithmic and never longer than asked; falling steps pass.
TEST(JunctionLimit, ShortensOnlyOvershootingSteps) {
  const DiodeConstants d = Zener();
  EXPECT_EQ(internal::LimitJunctionStep(d, 0.0, 0.3), 0.3);
  EXPECT_EQ(internal::LimitJunctionStep(d, 0.9, 0.1), 0.1);
  const double limited = internal::LimitJunctionStep(d, 0.0, 10.0);
  EXPECT_LT(limited, 1.5);
  EXPECT_GT(limited, 0.0);
  const double from_on = internal::LimitJunctionStep(d, 0.8, 2.0);
  EXPECT_GT(from_on, 0.8);
  EXPECT_LT(from_on, 0.8 + 10 * d.n_vt);
  // Mirrored in breakdown: a big step deeper into breakdown is shortened.
  const double deep = internal::LimitJunctionStep(d, -d.vbr, -50.0);
  EXPECT_LT(deep, -d.vbr);
  EXPECT_GT(deep, -d.vbr - 10 * d.nbr_vt);
}

}  // namespace
}  // namespace knee
