#include "fit_law.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "knee/diode_law.h"

namespace knee::fit_internal {

Params ToParams(const DiodeModel& m) {
  Params x{};
  for (int k = 0; k < kFitKeyCount; ++k) x[k] = GetFitKey(m, static_cast<FitKey>(k));
  x[Index(FitKey::kSatCurrent)] = std::log(m.sat_current);
  x[Index(FitKey::kBreakdownI)] = std::log(m.breakdown_i);
  return x;
}

DiodeModel FromParams(const Params& x, const DiodeModel& base, bool has_breakdown) {
  DiodeModel m = base;
  for (int k = 0; k < kFitKeyCount; ++k) SetFitKey(&m, static_cast<FitKey>(k), x[k]);
  m.sat_current = std::exp(x[Index(FitKey::kSatCurrent)]);
  m.breakdown_i = std::exp(x[Index(FitKey::kBreakdownI)]);
  if (!has_breakdown) m.breakdown_v.reset();
  return m;
}

PointLaw::PointLaw(const Params& x, bool breakdown, double temp_celsius, double ref_temp_celsius) {
  temp_k = ToKelvin(temp_celsius);
  t0_k = ToKelvin(ref_temp_celsius);
  vt = ThermalVoltage(temp_k);
  vt0 = ThermalVoltage(t0_k);
  n = x[Index(FitKey::kIdeality)];
  // Is(T) = Is(T0) * (T/T0)^(temp_exp/n) * exp((Eg/(n*Vt0)) * (1 - T0/T))   (netlist-format.md)
  ln_is_shift = (x[Index(FitKey::kSatTempExp)] / n) * std::log(temp_k / t0_k) +
                (x[Index(FitKey::kBandgap)] / (n * vt0)) * (1 - t0_k / temp_k);
  is_t = std::exp(x[Index(FitKey::kSatCurrent)] + ln_is_shift);
  n_vt = n * vt;
  rs = x[Index(FitKey::kSeriesRes)];
  has_breakdown = breakdown;
  if (breakdown) {
    ibr = std::exp(x[Index(FitKey::kBreakdownI)]);
    bv = x[Index(FitKey::kBreakdownV)];
    tc = x[Index(FitKey::kBreakdownTc)];
    delta_t = temp_celsius - ref_temp_celsius;
    vbr_t = bv * (1 + tc * delta_t);  // Vbr(T) = breakdown_v * (1 + breakdown_tc*(T - T0))
    nbr = x[Index(FitKey::kBreakdownIdeality)];
    nbr_vt = nbr * vt;
  }
}

PointLaw::At PointLaw::Evaluate(double vj) const {
  At at;
  const double e = std::exp(vj / n_vt);
  at.forward_exp = is_t * e;
  at.forward = is_t * std::expm1(vj / n_vt);
  at.slope = at.forward_exp / n_vt;
  if (has_breakdown) {
    at.b = -(vj + vbr_t) / nbr_vt;
    at.reverse = ibr * std::exp(at.b);
    at.slope += at.reverse / nbr_vt;
  }
  at.current = at.forward - at.reverse;
  return at;
}

namespace {

// A root of the increasing function f in [lo, hi] (f(lo) <= 0 <= f(hi)) by Newton steps
// kept inside the bracket, bisection where a step would leave it; starts at x0.
template <typename F>
double BracketedNewton(F f, double lo, double hi, double x0) {
  double x = std::clamp(x0, lo, hi);
  for (int it = 0; it < 400; ++it) {
    double slope = 0;
    const double fx = f(x, &slope);
    if (fx == 0) return x;
    if (fx < 0) lo = x;
    if (fx > 0) hi = x;
    const double tolerance =
        4 * std::numeric_limits<double>::epsilon() * std::max(1.0, std::fabs(x));
    const double step = fx / slope;
    // A Newton step below the resolution of x: x is the root to double precision (the step
    // may not even leave x, so it must be judged before the bracket test).
    if (std::isfinite(step) && std::fabs(step) <= tolerance) return x - step;
    double next = x - step;
    if (!std::isfinite(next) || !(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (hi - lo <= tolerance) return next;
    x = next;
  }
  return x;
}

}  // namespace

double PointLaw::JunctionAt(double v) const {
  if (rs == 0) return v;
  auto g = [&](double vj, double* slope) {
    const At at = Evaluate(vj);
    *slope = 1 + rs * at.slope;
    return vj + rs * at.current - v;
  };
  double s = 0;
  double lo = std::min(v, 0.0), hi = std::max(v, 0.0);
  for (double step = 1; g(lo, &s) > 0 && step < 1e6; step *= 2) lo -= step;
  for (double step = 1; g(hi, &s) < 0 && step < 1e6; step *= 2) hi += step;
  // Start on the side where Newton steps on the convex (forward) or concave (breakdown)
  // branch approach the root monotonically: at the junction voltage that would carry the
  // whole |v|/rs, which bounds the root.
  double x0 = 0.5 * (lo + hi);
  if (v > 0) {
    x0 = n_vt * std::log1p(v / (rs * is_t));
  } else if (v < 0 && has_breakdown) {
    x0 = -vbr_t - nbr_vt * std::log((-v / rs + is_t) / ibr);
  }
  return BracketedNewton(g, lo, hi, x0);
}

double PointLaw::JunctionCarrying(double i) const {
  if (!has_breakdown) {
    if (!(i > -is_t)) return std::numeric_limits<double>::quiet_NaN();
    return n_vt * std::log1p(i / is_t);
  }
  auto f = [&](double vj, double* slope) {
    const At at = Evaluate(vj);
    *slope = at.slope;
    return at.current - i;
  };
  double s = 0;
  double lo = -1, hi = 1;
  for (double step = 1; f(lo, &s) > 0 && step < 1e7; step *= 2) lo -= step;
  for (double step = 1; f(hi, &s) < 0 && step < 1e7; step *= 2) hi += step;
  double x0 = 0.5 * (lo + hi);
  if (i > 0) x0 = n_vt * std::log1p(i / is_t);
  if (i < -is_t) x0 = -vbr_t - nbr_vt * std::log((-i - is_t) / ibr);
  return BracketedNewton(f, lo, hi, x0);
}

bool PointResidual(const Params& x, bool breakdown, double ref_temp, const FitPoint& p,
                   double* residual, std::array<double, kFitKeyCount>* gradient) {
  const PointLaw law(x, breakdown, p.temp, ref_temp);
  const double vj = law.JunctionAt(p.v);
  const PointLaw::At at = law.Evaluate(vj);
  const double i = at.current;
  if (!std::isfinite(i) || !(i * p.i > 0)) return false;
  const double sw = std::sqrt(p.weight);
  *residual = sw * (std::log(std::fabs(i)) - std::log(std::fabs(p.i)));
  if (gradient == nullptr) return std::isfinite(*residual);
  // Partial derivatives of I at fixed Vj; the series resistance turns each into the total
  // derivative dI/dp = (dI/dp)|Vj / (1 + rs*G) (implicit function theorem on
  // vj + rs*I(vj) = v), and dI/drs = -G*I / (1 + rs*G).
  std::array<double, kFitKeyCount> partial{};
  const double a = vj / law.n_vt;
  partial[Index(FitKey::kSatCurrent)] = at.forward;
  partial[Index(FitKey::kIdeality)] =
      at.forward * (-law.ln_is_shift / law.n) + at.forward_exp * (-a / law.n);
  partial[Index(FitKey::kSatTempExp)] = at.forward * std::log(law.temp_k / law.t0_k) / law.n;
  partial[Index(FitKey::kBandgap)] = at.forward * (1 - law.t0_k / law.temp_k) / (law.n * law.vt0);
  if (breakdown) {
    partial[Index(FitKey::kBreakdownI)] = -at.reverse;
    partial[Index(FitKey::kBreakdownV)] = at.reverse * (1 + law.tc * law.delta_t) / law.nbr_vt;
    partial[Index(FitKey::kBreakdownTc)] = at.reverse * law.bv * law.delta_t / law.nbr_vt;
    partial[Index(FitKey::kBreakdownIdeality)] = at.reverse * at.b / law.nbr;
  }
  const double damp = 1 + law.rs * at.slope;
  for (int k = 0; k < kFitKeyCount; ++k) (*gradient)[k] = sw * partial[k] / damp / i;
  (*gradient)[Index(FitKey::kSeriesRes)] = sw * (-at.slope * i / damp) / i;
  // An overflowing exponential far from the data (a trial step of the solver) is a failed
  // evaluation, which the solver answers with a shorter step, not a value to use.
  for (double d : *gradient) {
    if (!std::isfinite(d)) return false;
  }
  return std::isfinite(*residual);
}

}  // namespace knee::fit_internal

namespace knee {

double ModelCurrent(const DiodeModel& model, double v, double temp_celsius) {
  const bool breakdown = model.breakdown_v.has_value();
  const fit_internal::PointLaw law(fit_internal::ToParams(model), breakdown, temp_celsius,
                                   model.ref_temp);
  return law.Evaluate(law.JunctionAt(v)).current;
}

double ModelVoltage(const DiodeModel& model, double i, double temp_celsius) {
  const bool breakdown = model.breakdown_v.has_value();
  const fit_internal::PointLaw law(fit_internal::ToParams(model), breakdown, temp_celsius,
                                   model.ref_temp);
  return law.JunctionCarrying(i) + law.rs * i;
}

}  // namespace knee
