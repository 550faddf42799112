// The diode law of the netlist contract: junction (Shockley) term, breakdown term,
// temperature laws. The equations and their sources are in docs/model.md.
#include <cmath>

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

JunctionPoint EvaluateJunction(const DiodeConstants& d, double vj) {
  JunctionPoint p;
  const double x = vj / d.n_vt;
  // expm1 keeps the small-signal region accurate (I ~ Is*x near zero bias).
  p.current = d.is * (x <= kExpLimit ? std::expm1(x) : SafeExp(x) - 1.0);
  p.conductance = d.is / d.n_vt * SafeExpSlope(x);
  if (d.has_breakdown) {
    const double y = -(vj + d.vbr) / d.nbr_vt;
    p.current -= d.ibr * SafeExp(y);
    p.conductance += d.ibr / d.nbr_vt * SafeExpSlope(y);
  }
  return p;
}

}  // namespace knee
