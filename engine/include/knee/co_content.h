// Co-content of the diode law: the integral of the junction current over the junction
// voltage, in closed form, consistent with the overflow-safe exponential (SafeExp is
// continued linearly above kExpLimit, and so its integral is continued quadratically).
// The co-content of a network (W. Millar, "Some general theorems for non-linear systems
// possessing resistance", Phil. Mag. 42, 1951) is the convex function whose minimum
// over the node voltages is the DC solution. See docs/solver.md, "The potential method".
#pragma once

#include "knee/diode_law.h"

namespace knee {

// An antiderivative of SafeExp: exp(x) for x <= kExpLimit, and above it
// exp(kExpLimit) * (1 + (x - kExpLimit) + (x - kExpLimit)^2 / 2), so that
// d/dx SafeExpIntegral(x) = SafeExp(x) everywhere (continuous in value and slope).
double SafeExpIntegral(double x);

// Co-content of a junction: C(vj) = integral from 0 to vj of EvaluateJunction(d, v).current
// dv, in J/s (W). C(0) = 0, dC/dvj = junction current, d2C/dvj2 = conductance > 0.
double JunctionCoContent(const DiodeConstants& d, double vj);

}  // namespace knee
