// The diode law of netlist-format.md, "Diode parameters", as plain functions, so that
// tests and reports can evaluate it without a circuit. See docs/model.md.
#pragma once

#include <cmath>
#include <limits>

#include "knee/circuit.h"

namespace knee {

// CODATA 2018 exact values (SI 2019 redefinition).
inline constexpr double kBoltzmann = 1.380649e-23;            // J/K
inline constexpr double kElementaryCharge = 1.602176634e-19;  // C
inline constexpr double kZeroCelsius = 273.15;                // K

// ln of the largest finite double (DBL_MAX = 1.797e308): an exponential term whose log
// exceeds it is not a double. The junction law is evaluated exactly below it.
inline constexpr double kLogDoubleMax = 709.782712893384;

inline double ToKelvin(double celsius) { return celsius + kZeroCelsius; }
inline double ThermalVoltage(double kelvin) { return kBoltzmann * kelvin / kElementaryCharge; }

// Temperature-adjusted constants of one diode element (area applied). The saturation
// current is carried as its logarithm too: at 4 K area*Is(T) is e^-3000 and more, far
// below the smallest double, while the law's currents at a forward bias are ordinary.
struct DiodeConstants {
  double is = 0;      // A: area * Is(T), 0 where it underflows
  double log_is = 0;  // ln(area * Is(T)), finite for every valid part
  double n_vt = 0;    // V: ideality * Vt(T)
  double rs = 0;      // Ohm: series_res / area
  bool has_breakdown = false;
  double ibr = 0;      // A: area * breakdown_i
  double log_ibr = 0;  // ln(area * breakdown_i)
  double nbr_vt = 0;   // V: breakdown_ideality * Vt(T)
  double vbr = 0;      // V: breakdown_v(T)
};

DiodeConstants ComputeDiodeConstants(const DiodeModel& model, double area, double temp_celsius);

// Saturation current at temperature T (degC) per the contract's law, area 1; 0 where it
// is below the smallest double (use LogSatCurrentAt there).
double SatCurrentAt(const DiodeModel& model, double temp_celsius);
// ln Is(T), area 1, in closed form: finite at any temperature above absolute zero.
double LogSatCurrentAt(const DiodeModel& model, double temp_celsius);
// Breakdown voltage at temperature T (degC).
double BreakdownVoltageAt(const DiodeModel& model, double temp_celsius);

// Junction current and its derivative dI/dVj at junction voltage vj: the contract's law
// exactly, as far as the values are doubles. Each exponential term is evaluated as
// exp(ln(scale) + exponent), so that neither a saturation current below the smallest
// double nor an exponent above 709 loses it; where a term exceeds the largest double
// the current (or conductance) is +inf, never a stand-in value.
struct JunctionPoint {
  double current = 0;      // A
  double conductance = 0;  // S
};
inline JunctionPoint EvaluateJunction(const DiodeConstants& d, double vj);
// The law's two conductance scales, the quotients is/n_vt and ibr/nbr_vt that
// EvaluateJunction takes: kept by a caller that evaluates one junction law many times,
// which then evaluates it with the same numbers and two divisions fewer.
struct JunctionScales {
  double forward = 0;    // S: is / n_vt
  double breakdown = 0;  // S: ibr / nbr_vt, when has_breakdown
};
inline JunctionScales ScalesOf(const DiodeConstants& d) {
  JunctionScales s;
  s.forward = d.is / d.n_vt;
  if (d.has_breakdown) s.breakdown = d.ibr / d.nbr_vt;
  return s;
}
inline JunctionPoint EvaluateJunction(const DiodeConstants& d, double vj, const JunctionScales& s);

// ln of the magnitude of the dominant exponential term of the law at vj (the forward
// term area*Is(T)*e^(vj/(n*Vt)) or the breakdown term), finite where the current itself
// would overflow: for saying how large a current would be.
double LogJunctionCurrent(const DiodeConstants& d, double vj);

// The junction voltage of a diode with series resistance d.rs at terminal voltage v (the
// root of v = vj + rs*I(vj)); `guess` is where the search starts. v itself when rs == 0.
// When `at` is given it receives the junction's current and conductance at the result.
// `at_guess`, when given, is EvaluateJunction(d, guess), already known to the caller: the
// search then starts without evaluating it again (the same result, bit for bit).
double JunctionVoltageAt(const DiodeConstants& d, double v, double guess,
                         JunctionPoint* at = nullptr, const JunctionPoint* at_guess = nullptr);

// --- the law's evaluation, in line: every Newton step of every diode calls it ---

namespace law_detail {

// A scale (area*Is(T), area*Ibr) that is a normal double: the law is then scale*(e^x - 1)
// to an ulp wherever the exponential itself is a double.
inline bool NormalScale(double s) {
  return s >= std::numeric_limits<double>::min() && std::isfinite(s);
}
// Below this exponent exp() is exactly 0 in double precision (the smallest subnormal is
// exp(-744.44)); returning 0 directly skips libm's slow underflow path, which a
// forward-biased diode's breakdown term (exponent about -15000) takes at every step.
inline constexpr double kExpUnderflow = -746.0;
// Below this exponent expm1() is exactly -1 (e^-40 < 2^-54, half an ulp of 1).
inline constexpr double kExpm1Saturation = -40.0;
// exp(x): 0 below the subnormals, +inf above the largest double.
inline double ExpOrZero(double x) { return x < kExpUnderflow ? 0.0 : std::exp(x); }

}  // namespace law_detail

inline JunctionPoint EvaluateJunction(const DiodeConstants& d, double vj) {
  return EvaluateJunction(d, vj, ScalesOf(d));
}

inline JunctionPoint EvaluateJunction(const DiodeConstants& d, double vj, const JunctionScales& s) {
  using law_detail::ExpOrZero;
  using law_detail::NormalScale;
  // Forward term is*(e^x - 1), x = vj/(n*Vt), and its slope is/(n*Vt)*e^x, to an ulp
  // with one exponential: expm1 near zero bias (the small-signal region, I ~ Is*x),
  // e^x - 1 where e^x < 0.37 (no cancellation). Where is is below the normal doubles or
  // e^x beyond them, the term is exp(ln is + x) (the rounding of that sum costs
  // |ln is + x| ulps, 3e-13 relative at 4 K) and the -is is below its rounding.
  JunctionPoint p;
  const double x = vj / d.n_vt;
  if (NormalScale(d.is) && x <= kLogDoubleMax) {
    if (x > -1.0) {
      // e^x = expm1(x) + 1 is exact to an ulp here (expm1 > -0.64).
      const double m = std::expm1(x);
      p.current = d.is * m;
      p.conductance = s.forward * (m + 1.0);
    } else {
      const double e = ExpOrZero(x);
      p.current = d.is * (x < law_detail::kExpm1Saturation ? -1.0 : e - 1.0);
      p.conductance = s.forward * e;
    }
  } else {
    const double e = ExpOrZero(d.log_is + x);  // +inf beyond the largest double
    p.current = e - d.is;
    p.conductance = e / d.n_vt;
  }
  if (d.has_breakdown) {
    // Breakdown term ibr*e^y, y = -(vj + vbr)/(nbr*Vt), the same way.
    const double y = -(vj + d.vbr) / d.nbr_vt;
    if (NormalScale(d.ibr) && y <= kLogDoubleMax) {
      const double e = ExpOrZero(y);
      p.current -= d.ibr * e;
      p.conductance += s.breakdown * e;
    } else {
      const double term = ExpOrZero(d.log_ibr + y);
      p.current -= term;
      p.conductance += term / d.nbr_vt;
    }
  }
  return p;
}

}  // namespace knee
