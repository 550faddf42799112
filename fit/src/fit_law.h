// The diode law of netlist-format.md ("Diode parameters") at one point, in the parameter
// vector the fit moves, with its derivatives (docs/fit.md, "Residuals"). Internal.
#pragma once

#include <array>

#include "knee/circuit.h"
#include "knee/fit.h"

namespace knee::fit_internal {

// The fit's parameter vector in FitKey order; sat_current and breakdown_i as natural
// logarithms, every other key in its own unit.
using Params = std::array<double, kFitKeyCount>;
inline constexpr int Index(FitKey key) { return static_cast<int>(key); }

Params ToParams(const DiodeModel& model);
DiodeModel FromParams(const Params& x, const DiodeModel& base, bool has_breakdown);

// The law at one temperature: I(Vj) = is_t*(exp(Vj/n_vt) - 1) - ibr*exp(-(Vj + vbr_t)/nbr_vt).
struct PointLaw {
  double temp_k = 0, t0_k = 0, vt = 0, vt0 = 0;
  double n = 1, is_t = 0, ln_is_shift = 0;  // ln(is_t) - ln(sat_current)
  double n_vt = 0;
  bool has_breakdown = false;
  double ibr = 0, vbr_t = 0, nbr = 1, nbr_vt = 0, bv = 0, tc = 0, delta_t = 0;
  double rs = 0;

  PointLaw(const Params& x, bool breakdown, double temp_celsius, double ref_temp_celsius);

  struct At {
    double forward = 0;      // is_t*(exp(a) - 1)
    double forward_exp = 0;  // is_t*exp(a)
    double reverse = 0;      // ibr*exp(b), >= 0
    double b = 0;            // -(Vj + vbr_t)/nbr_vt
    double current = 0;      // forward - reverse
    double slope = 0;        // dI/dVj
  };
  At Evaluate(double vj) const;
  // The junction voltage at terminal voltage v: the root of vj + rs*I(vj) = v.
  double JunctionAt(double v) const;
  // The junction voltage carrying current i; NaN when none does (i <= -is_t without
  // breakdown).
  double JunctionCarrying(double i) const;
};

// The residual of one point, sqrt(w)*ln(I_model(v)/i), and its derivative with respect to
// every parameter (all kFitKeyCount of them). False when the model's current at v is not
// of the measured sign or not finite.
bool PointResidual(const Params& x, bool breakdown, double ref_temp, const FitPoint& point,
                   double* residual, std::array<double, kFitKeyCount>* gradient);

}  // namespace knee::fit_internal
