// The junction co-content in closed form (docs/solver.md, "The potential method").
#include "knee/co_content.h"

#include <cmath>

namespace knee {

using law_detail::NormalScale;

double JunctionCoContent(const DiodeConstants& d, double vj) {
  // Forward term: the integral of is*(e^(v/a) - 1) dv from 0 to vj, a = n*Vt, is
  // is*a*(expm1(x) - x) with x = vj/a (expm1 keeps it accurate near zero bias). Where is
  // is below the normal doubles or e^x beyond them, as in EvaluateJunction:
  // a*exp(ln is + x) - is*(a + vj).
  const double a = d.n_vt;
  const double x = vj / a;
  double c = 0.0;
  if (NormalScale(d.is) && x <= kLogDoubleMax) {
    c = d.is * a * (std::expm1(x) - x);
  } else {
    const double e = d.log_is + x < -746.0 ? 0.0 : std::exp(d.log_is + x);
    c = a * e - d.is * (a + vj);
  }
  if (d.has_breakdown) {
    // Breakdown term: the integral of -ibr*e^(y(v)) dv with y(v) = -(v + vbr)/b,
    // b = nbr*Vt; since dy/dv = -1/b it is ibr*b*(e^y - e^y0), y0 = y(0).
    const double b = d.nbr_vt;
    const double y0 = -d.vbr / b;
    const double y = -(vj + d.vbr) / b;
    if (NormalScale(d.ibr) && y <= kLogDoubleMax && y0 <= kLogDoubleMax) {
      // e^y0 * expm1(y - y0) keeps digits when y is near y0; far from it, e^y0 can
      // underflow to 0 while expm1 overflows (a 400 V part reverse-biased past ~18 V),
      // and the plain difference is exact enough.
      c += y - y0 < 700.0 ? d.ibr * b * std::exp(y0) * std::expm1(y - y0)
                          : d.ibr * b * (std::exp(y) - std::exp(y0));
    } else {
      c += b * (std::exp(d.log_ibr + y) - std::exp(d.log_ibr + y0));
    }
  }
  return c;
}

}  // namespace knee
