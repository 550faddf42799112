// The junction co-content in closed form (docs/solver.md, "The potential method").
#include "knee/co_content.h"

#include <cmath>

namespace knee {

double SafeExpIntegral(double x) {
  if (x <= kExpLimit) return std::exp(x);
  const double u = x - kExpLimit;
  return std::exp(kExpLimit) * (1.0 + u + 0.5 * u * u);
}

double JunctionCoContent(const DiodeConstants& d, double vj) {
  // Forward term: integral of is * (SafeExp(v/a) - 1) dv from 0 to vj, a = n*Vt, is
  // is * a * (SafeExpIntegral(x) - 1 - x) with x = vj/a. Below the limit expm1 keeps it
  // accurate near zero bias.
  const double x = vj / d.n_vt;
  const double forward_integral = x <= kExpLimit ? std::expm1(x) : SafeExpIntegral(x) - 1.0;
  double c = d.is * d.n_vt * (forward_integral - x);
  if (d.has_breakdown) {
    // Breakdown term: integral of -ibr * SafeExp(y(v)) dv with y(v) = -(v + vbr)/b,
    // b = nbr*Vt; since dy/dv = -1/b it equals ibr * b * (F(y(vj)) - F(y(0))), F the
    // antiderivative above. Both exponents below the limit: ibr*b*e^{y0}*expm1(y - y0).
    const double b = d.nbr_vt;
    const double y0 = -d.vbr / b;
    const double y = -(vj + d.vbr) / b;
    if (y <= kExpLimit && y0 <= kExpLimit) {
      // e^{y0} * expm1(y - y0) keeps digits when y is near y0; far from it, e^{y0} can
      // underflow to 0 while expm1 overflows (a 400 V part reverse-biased past ~18 V),
      // and the plain difference is exact enough.
      c += y - y0 < 700.0 ? d.ibr * b * std::exp(y0) * std::expm1(y - y0)
                          : d.ibr * b * (std::exp(y) - std::exp(y0));
    } else {
      c += d.ibr * b * (SafeExpIntegral(y) - SafeExpIntegral(y0));
    }
  }
  return c;
}

}  // namespace knee
