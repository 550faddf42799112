// Junction limiting: the step of a junction voltage that Newton's linearisation would
// overshoot, shortened to where the exponential law carries the predicted current.
#include <algorithm>
#include <cmath>
#include <limits>

#include "devices.h"

namespace knee::internal {
namespace {

// FallingStep trusts a predicted current down to this fraction of the branch's scale
// above its reverse limit (at most about 14 n*Vt into reverse bias).
constexpr double kFallingFloor = 1e-6;
// ... and acts only where Newton's line predicts a fall of the current below this
// fraction of its present value (a step of more than about 0.9 n*Vt).
constexpr double kFallingFraction = 0.1;

// Above the critical voltage the exponential's slope grows so fast that the linearised
// step overshoots; there a step is shortened to the voltage at which the exponential law
// carries the current the linearisation predicted (a logarithmic step). The voltage is
// n*Vt*ln(n*Vt/(sqrt(2)*scale)), from the scale's logarithm where the scale itself is
// below the normal doubles (a cold junction).
double CriticalVoltage(double i_scale, double log_scale, double n_vt) {
  if (i_scale >= std::numeric_limits<double>::min()) {
    return n_vt * std::log(n_vt / (std::sqrt(2.0) * i_scale));
  }
  return n_vt * (std::log(n_vt / std::sqrt(2.0)) - log_scale);
}

}  // namespace

double LogStep(double base, double proposed, double n_vt) {
  return base + n_vt * std::log1p((proposed - base) / n_vt);
}

// A falling step of an exponential branch i_scale*(exp(w/n_vt) - 1) from `previous`
// to `proposed`: Newton's line for the branch predicts the current i_pred there. From
// far up the exponential, Newton moves by only about n_vt per step toward a much
// smaller current (the tangent reaches zero current one n_vt below the point), so a
// junction that must come down by volts would crawl for hundreds of steps. The voltage
// at which the law itself carries i_pred is where the step is headed: it is taken
// instead (at or below `proposed`, since the tangent of a convex law lies below it).
// Returns `proposed` when the prediction is at or beyond the branch's reverse limit.
// The branch's exponential term is exp(log_scale + w/n_vt) where the scale is below the
// normal doubles or e^(w/n_vt) beyond them, as in EvaluateJunction.
double FallingStep(double previous, double proposed, double i_scale, double log_scale,
                   double n_vt) {
  const double x = previous / n_vt;
  const bool plain = i_scale >= std::numeric_limits<double>::min() && x <= kLogDoubleMax;
  if (plain) {
    const double e = std::exp(x);
    const double now = i_scale * (e - 1.0);
    const double predicted = now + i_scale / n_vt * e * (proposed - previous);
    if (!(predicted < kFallingFraction * now)) return proposed;  // Newton's step is fine
    const double ratio = 1.0 + predicted / i_scale;
    if (!(ratio > kFallingFloor)) return proposed;
    return std::min(proposed, n_vt * std::log(ratio));
  }
  const double term = std::exp(log_scale + x);
  const double now = term - i_scale;
  const double predicted = now + term / n_vt * (proposed - previous);
  if (!(predicted < kFallingFraction * now)) return proposed;
  // ratio = 1 + predicted/i_scale, in logarithms: ln(predicted + i_scale) - log_scale.
  const double carried = predicted + i_scale;
  if (!(carried > 0.0)) return proposed;
  const double log_ratio = std::log(carried) - log_scale;
  if (!(log_ratio > std::log(kFallingFloor))) return proposed;
  return std::min(proposed, n_vt * log_ratio);
}

JunctionLimits ComputeJunctionLimits(const DiodeConstants& d) {
  JunctionLimits limits;
  limits.v_crit = CriticalVoltage(d.is, d.log_is, d.n_vt);
  if (d.has_breakdown) limits.u_crit = CriticalVoltage(d.ibr, d.log_ibr, d.nbr_vt);
  return limits;
}

double LimitJunctionStep(const DiodeConstants& d, double previous, double proposed) {
  return LimitJunctionStep(d, ComputeJunctionLimits(d), previous, proposed);
}

}  // namespace knee::internal
