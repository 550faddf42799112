// The diode law of the netlist contract: junction (Shockley) term, breakdown term,
// temperature laws. The equations and their sources are in docs/model.md.
#include <algorithm>
#include <cmath>
#include <limits>

#include "knee/diode_law.h"

namespace knee {

namespace {

// ln(Is(T)/Is(T0)) of the contract's temperature law:
// Is(T) = Is(T0) * (T/T0)^(sat_temp_exp/n) * exp((Eg/(n*Vt0)) * (1 - T0/T)).
double LogSatRatio(const DiodeModel& model, double temp_celsius) {
  const double t = ToKelvin(temp_celsius);
  const double t0 = ToKelvin(model.ref_temp);
  const double n = model.ideality;
  const double vt0 = ThermalVoltage(t0);
  return (model.sat_temp_exp / n) * std::log(t / t0) + (model.bandgap / (n * vt0)) * (1.0 - t0 / t);
}

}  // namespace

double SatCurrentAt(const DiodeModel& model, double temp_celsius) {
  // One exponential of the summed logarithms, so that neither factor overflows alone.
  return model.sat_current * std::exp(LogSatRatio(model, temp_celsius));
}

double LogSatCurrentAt(const DiodeModel& model, double temp_celsius) {
  return std::log(model.sat_current) + LogSatRatio(model, temp_celsius);
}

double BreakdownVoltageAt(const DiodeModel& model, double temp_celsius) {
  if (!model.breakdown_v) return 0.0;
  return *model.breakdown_v * (1.0 + model.breakdown_tc * (temp_celsius - model.ref_temp));
}

DiodeConstants ComputeDiodeConstants(const DiodeModel& model, double area, double temp_celsius) {
  const double vt = ThermalVoltage(ToKelvin(temp_celsius));
  DiodeConstants d;
  d.is = area * SatCurrentAt(model, temp_celsius);
  // Where area*Is(T) is a normal double its own logarithm is the most consistent value;
  // below (a cold junction, a wide-bandgap part) the closed form.
  d.log_is = law_detail::NormalScale(d.is) ? std::log(d.is)
                                           : std::log(area) + LogSatCurrentAt(model, temp_celsius);
  d.n_vt = model.ideality * vt;
  d.rs = model.series_res / area;
  d.has_breakdown = model.breakdown_v.has_value();
  if (d.has_breakdown) {
    d.ibr = area * model.breakdown_i;
    d.log_ibr = std::log(area) + std::log(model.breakdown_i);
    d.nbr_vt = model.breakdown_ideality * vt;
    d.vbr = BreakdownVoltageAt(model, temp_celsius);
  }
  return d;
}

namespace {

// Enough for bisection to narrow any bracket of doubles to adjacent numbers.
constexpr int kJunctionSolveIterations = 200;

}  // namespace

double LogJunctionCurrent(const DiodeConstants& d, double vj) {
  double log_term = d.log_is + std::max(vj / d.n_vt, 0.0);
  if (d.has_breakdown) log_term = std::max(log_term, d.log_ibr - (vj + d.vbr) / d.nbr_vt);
  return log_term;
}

namespace {

// The voltage at which the forward (f > 0) or breakdown (f < 0) term carries |v|/rs.
double Carried(const DiodeConstants& d, double v, double f) {
  const double log_i = std::log(std::fabs(v) / d.rs);
  if (f > 0.0) return d.n_vt * (log_i - d.log_is);
  return d.has_breakdown ? -d.vbr - d.nbr_vt * (log_i - d.log_ibr) : v;
}

// The interval known to hold the root of h; infinite on a side no finite point bounds.
struct RootBracket {
  double lo = -HUGE_VAL, hi = HUGE_VAL;
  bool Inside(double p) const { return p > lo && p < hi; }
  double Middle() const {
    if (std::isfinite(lo) && std::isfinite(hi)) return 0.5 * (lo + hi);
    return std::isfinite(hi) ? hi - (1.0 + std::fabs(hi)) : lo + (1.0 + std::fabs(lo));
  }
  // Narrowed by the point x where h = f (f != 0): the root lies below x for f > 0, and
  // on the far side of x - f.
  void Narrow(double x, double f) {
    if (f > 0.0) {
      hi = std::min(hi, x);
      if (std::isfinite(f) && !std::isfinite(lo)) lo = x - f;
    } else {
      lo = std::max(lo, x);
      if (std::isfinite(f) && !std::isfinite(hi)) hi = x - f;
    }
  }
};

}  // namespace

// The junction voltage of a diode with series resistance at terminal voltage v: the
// root of h(vj) = vj + rs*I(vj) - v. h rises with slope 1 + rs*g >= 1, so from any point
// p the point p - h(p) lies on the other side of the root: a bracket from one
// evaluation. Around a guess of v's size (a warm start: the last junction voltage) that
// evaluation is the first Newton point too; around a far-off guess p - h(p) would cancel
// to nothing (guess -1e138, v = 1 nV), so the bracket is then built at v. Where the law
// overflows at a point (h = +-inf: v of kilovolts) the root lies on one side of it, and
// the next point is the voltage at which the dominant term alone carries |v|/rs. Newton's
// method inside the bracket, bisection where Newton would leave it or creeps.
double JunctionVoltageAt(const DiodeConstants& d, double v, double guess, JunctionPoint* at,
                         const JunctionPoint* at_guess) {
  JunctionPoint point;
  const auto residual = [&](double vj, double* slope) {
    *slope = 1.0 + d.rs * point.conductance;
    return vj + d.rs * point.current - v;
  };
  const auto h = [&](double vj, double* slope) {
    point = EvaluateJunction(d, vj);
    return residual(vj, slope);
  };
  if (!(d.rs > 0.0)) {
    if (at != nullptr) *at = EvaluateJunction(d, v);
    return v;
  }
  const auto carried = [&](double f) { return Carried(d, v, f); };
  double slope = 1.0;
  const bool near = std::isfinite(guess) && std::fabs(guess) <= 2.0 * std::fabs(v) + 1.0;
  double x = near ? guess : v;
  double f = 0.0;
  if (near && at_guess != nullptr) {
    point = *at_guess;
    f = residual(x, &slope);
  } else {
    f = h(x, &slope);
  }
  if (!std::isfinite(f) && x != v) {
    x = v;
    f = h(x, &slope);
  }
  if (f == 0.0 || std::isnan(f)) {
    if (at != nullptr) *at = point;
    return x;
  }
  // The root lies on the far side of p - h(p) from p; where h(p) is infinite, only on
  // one side of p, until a finite point gives the other end.
  RootBracket b;
  if (std::isfinite(f)) {
    b.lo = f > 0.0 ? x - f : x;
    b.hi = f > 0.0 ? x : x - f;
  }
  const double resolution = 4.0 * std::numeric_limits<double>::epsilon();
  // From far up the exponential Newton's step is about n*Vt whatever the distance to the
  // root; a Newton step longer than half the one before is not converging fast, and the
  // bracket is bisected instead (as in the safeguarded Newton method "rtsafe" of Press et
  // al., Numerical Recipes, ch. 9.4, recalled from memory).
  double last_change = HUGE_VAL;
  for (int k = 0; k < kJunctionSolveIterations && f != 0.0; ++k) {
    b.Narrow(x, f);
    double next = 0.0;
    if (std::isfinite(f) && std::isfinite(slope)) {
      const double newton = f / slope;
      // x is the root as far as doubles go when both the Newton step is below x's
      // rounding and v = vj + rs*I already holds to v's rounding (`point` is x's).
      const double scale = resolution * (std::fabs(x) + std::fabs(v));
      if (std::fabs(newton) <= scale && std::fabs(f) <= scale) break;
      next = x - newton;
      if (std::fabs(newton) > 0.5 * last_change) {
        next = b.Inside(carried(f)) ? carried(f) : b.Middle();
      }
    } else {
      next = carried(f);
    }
    if (!(next >= b.lo && next <= b.hi)) next = b.Middle();
    const double change = std::fabs(next - x);
    last_change = change;
    x = next;
    f = h(x, &slope);
    if (std::isnan(f)) break;
    if (std::isfinite(f) && std::isfinite(slope) &&
        change <= resolution * (std::fabs(x) + std::fabs(v))) {
      break;
    }
  }
  if (at != nullptr) *at = point;
  return x;
}

}  // namespace knee
