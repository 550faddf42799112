// The diode law of netlist-format.md, "Diode parameters", as plain functions, so that
// tests and reports can evaluate it without a circuit. See docs/model.md.
#pragma once

#include "knee/circuit.h"

namespace knee {

// CODATA 2018 exact values (SI 2019 redefinition).
inline constexpr double kBoltzmann = 1.380649e-23;            // J/K
inline constexpr double kElementaryCharge = 1.602176634e-19;  // C
inline constexpr double kZeroCelsius = 273.15;                // K

inline double ToKelvin(double celsius) { return celsius + kZeroCelsius; }
inline double ThermalVoltage(double kelvin) { return kBoltzmann * kelvin / kElementaryCharge; }

// Temperature-adjusted constants of one diode element (area applied).
struct DiodeConstants {
  double is = 0;    // A: area * Is(T)
  double n_vt = 0;  // V: ideality * Vt(T)
  double rs = 0;    // Ohm: series_res / area
  bool has_breakdown = false;
  double ibr = 0;     // A: area * breakdown_i
  double nbr_vt = 0;  // V: breakdown_ideality * Vt(T)
  double vbr = 0;     // V: breakdown_v(T)
};

DiodeConstants ComputeDiodeConstants(const DiodeModel& model, double area, double temp_celsius);

// Saturation current at temperature T (degC) per the contract's law, area 1.
double SatCurrentAt(const DiodeModel& model, double temp_celsius);
// Breakdown voltage at temperature T (degC).
double BreakdownVoltageAt(const DiodeModel& model, double temp_celsius);

// Junction current and its derivative dI/dVj at junction voltage vj, with the
// overflow-safe exponential (continued linearly above an exponent of kExpLimit,
// continuous in value and slope).
struct JunctionPoint {
  double current = 0;      // A
  double conductance = 0;  // S
};
inline constexpr double kExpLimit = 80.0;
JunctionPoint EvaluateJunction(const DiodeConstants& d, double vj);

// The junction voltage of a diode with series resistance d.rs at terminal voltage v (the
// root of v = vj + rs*I(vj)); `guess` is where the search starts. v itself when rs == 0.
// When `at` is given it receives the junction's current and conductance at the result.
double JunctionVoltageAt(const DiodeConstants& d, double v, double guess,
                         JunctionPoint* at = nullptr);

// exp(x) for x <= kExpLimit, exp(kExpLimit) * (1 + x - kExpLimit) above.
double SafeExp(double x);
// d/dx SafeExp(x): exp(x) for x <= kExpLimit, exp(kExpLimit) above.
double SafeExpSlope(double x);

}  // namespace knee
