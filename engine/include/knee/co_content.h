// Co-content of the diode law: the integral of the junction current over the junction
// voltage, in closed form, exactly as consistent with the law as EvaluateJunction is.
// The co-content of a network (W. Millar, "Some general theorems for non-linear systems
// possessing resistance", Phil. Mag. 42, 1951) is the convex function whose minimum
// over the node voltages is the DC solution. See docs/solver.md, "The potential method".
#pragma once

#include "knee/diode_law.h"

namespace knee {

// Co-content of a junction: C(vj) = integral from 0 to vj of EvaluateJunction(d, v).current
// dv, in J/s (W). C(0) = 0, dC/dvj = junction current, d2C/dvj2 = conductance > 0; +inf
// where the law's exponential term exceeds the largest double (the current does too).
double JunctionCoContent(const DiodeConstants& d, double vj);

}  // namespace knee
