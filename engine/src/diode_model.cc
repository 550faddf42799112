// The diode law of the netlist contract: junction (Shockley) term, breakdown term,
// temperature laws. The equations and their sources are in docs/model.md.
#include <cmath>
#include <limits>

#include "knee/diode_law.h"

namespace knee {

double SafeExp(double x) {
  if (x <= kExpLimit) return std::exp(x);
  return std::exp(kExpLimit) * (1.0 + (x - kExpLimit));
}

double SafeExpSlope(double x) { return std::exp(x <= kExpLimit ? x : kExpLimit); }

double SatCurrentAt(const DiodeModel& model, double temp_celsius) {
  const double t = ToKelvin(temp_celsius);
  const double t0 = ToKelvin(model.ref_temp);
  const double n = model.ideality;
  const double vt0 = ThermalVoltage(t0);
  // Is(T) = Is(T0) * (T/T0)^(sat_temp_exp/n) * exp((Eg/(n*Vt0)) * (1 - T0/T)),
  // evaluated as one exponential so that neither factor overflows on its own.
  const double log_ratio =
      (model.sat_temp_exp / n) * std::log(t / t0) + (model.bandgap / (n * vt0)) * (1.0 - t0 / t);
  return model.sat_current * std::exp(log_ratio);
}

double BreakdownVoltageAt(const DiodeModel& model, double temp_celsius) {
  if (!model.breakdown_v) return 0.0;
  return *model.breakdown_v * (1.0 + model.breakdown_tc * (temp_celsius - model.ref_temp));
}

DiodeConstants ComputeDiodeConstants(const DiodeModel& model, double area, double temp_celsius) {
  const double vt = ThermalVoltage(ToKelvin(temp_celsius));
  DiodeConstants d;
  d.is = area * SatCurrentAt(model, temp_celsius);
  d.n_vt = model.ideality * vt;
  d.rs = model.series_res / area;
  d.has_breakdown = model.breakdown_v.has_value();
  if (d.has_breakdown) {
    d.ibr = area * model.breakdown_i;
    d.nbr_vt = model.breakdown_ideality * vt;
    d.vbr = BreakdownVoltageAt(model, temp_celsius);
  }
  return d;
}

namespace {

// Below this exponent exp() is exactly 0 in double precision (the smallest subnormal is
// exp(-744.44)); returning 0 directly skips libm's slow underflow path, which a
// forward-biased diode's breakdown term (exponent about -15000) takes at every step.
constexpr double kExpUnderflow = -746.0;
// Below this exponent expm1() is exactly -1 (e^-40 < 2^-54, half an ulp of 1).
constexpr double kExpm1Saturation = -40.0;
// Enough for bisection to narrow any bracket of doubles to adjacent numbers.
constexpr int kJunctionSolveIterations = 200;

double ExpOrZero(double x) { return x < kExpUnderflow ? 0.0 : std::exp(x); }

}  // namespace

JunctionPoint EvaluateJunction(const DiodeConstants& d, double vj) {
  // The values of is*(SafeExp(x) - 1) (expm1 near zero bias, which keeps the small-signal
  // region accurate: I ~ Is*x), is/nVt*SafeExpSlope(x) and the breakdown terms
  // ibr*SafeExp(y), ibr/nbrVt*SafeExpSlope(y), to an ulp, with one exponential per term.
  JunctionPoint p;
  const double x = vj / d.n_vt;
  if (x > -1.0 && x <= kExpLimit) {
    // One transcendental: e^x = expm1(x) + 1 is exact to an ulp here (expm1 > -0.64).
    const double m = std::expm1(x);
    p.current = d.is * m;
    p.conductance = d.is / d.n_vt * (m + 1.0);
  } else if (x <= kExpLimit) {
    // e^x < 0.37: e^x - 1 has no cancellation, so expm1 is not needed either.
    const double e = ExpOrZero(x);
    p.current = d.is * (x < kExpm1Saturation ? -1.0 : e - 1.0);
    p.conductance = d.is / d.n_vt * e;
  } else {
    const double e = std::exp(kExpLimit);
    p.current = d.is * (e * (1.0 + (x - kExpLimit)) - 1.0);
    p.conductance = d.is / d.n_vt * e;
  }
  if (d.has_breakdown) {
    const double y = -(vj + d.vbr) / d.nbr_vt;
    const double e = ExpOrZero(y <= kExpLimit ? y : kExpLimit);
    p.current -= d.ibr * (y <= kExpLimit ? e : e * (1.0 + (y - kExpLimit)));
    p.conductance += d.ibr / d.nbr_vt * e;
  }
  return p;
}

// The junction voltage of a diode with series resistance at terminal voltage v: the
// root of h(vj) = vj + rs*I(vj) - v. h rises with slope 1 + rs*g >= 1, so from any point
// p the point p - h(p) lies on the other side of the root: a bracket from one
// evaluation. Around a guess of v's size (a warm start: the last junction voltage) that
// evaluation is the first Newton point too; around a far-off guess p - h(p) would cancel
// to nothing (guess -1e138, v = 1 nV), so the bracket is then built at v. Newton's
// method inside the bracket, bisection where Newton would leave it.
double JunctionVoltageAt(const DiodeConstants& d, double v, double guess, JunctionPoint* at) {
  JunctionPoint point;
  const auto h = [&](double vj, double* slope) {
    point = EvaluateJunction(d, vj);
    *slope = 1.0 + d.rs * point.conductance;
    return vj + d.rs * point.current - v;
  };
  if (!(d.rs > 0.0)) {
    if (at != nullptr) *at = EvaluateJunction(d, v);
    return v;
  }
  double slope = 1.0;
  const bool near = std::isfinite(guess) && std::fabs(guess) <= 2.0 * std::fabs(v) + 1.0;
  double x = near ? guess : v;
  double f = h(x, &slope);
  if (!std::isfinite(f) && x != v) {
    x = v;
    f = h(x, &slope);
  }
  if (f == 0.0 || !std::isfinite(f)) {
    if (at != nullptr) *at = point;
    return x;
  }
  double lo = f > 0.0 ? x - f : x;
  double hi = f > 0.0 ? x : x - f;
  const double resolution = 4.0 * std::numeric_limits<double>::epsilon();
  for (int k = 0; k < kJunctionSolveIterations && f != 0.0; ++k) {
    (f > 0.0 ? hi : lo) = x;
    const double newton = f / slope;
    // x is the root as far as doubles go when both the Newton step is below x's rounding
    // and v = vj + rs*I already holds to v's rounding (`point` is then x's already).
    const double scale = resolution * (std::fabs(x) + std::fabs(v));
    if (std::fabs(newton) <= scale && std::fabs(f) <= scale) break;
    double next = x - newton;
    if (!(next >= lo && next <= hi)) next = 0.5 * (lo + hi);
    const double change = std::fabs(next - x);
    x = next;
    f = h(x, &slope);
    if (!std::isfinite(f) || change <= resolution * (std::fabs(x) + std::fabs(v))) break;
  }
  if (at != nullptr) *at = point;
  return x;
}

}  // namespace knee
