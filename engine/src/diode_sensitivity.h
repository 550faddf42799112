// Closed-form derivatives of one diode for the adjoint method (docs/sensitivity.md): of
// its current, junction voltage and small-signal resistance at a fixed terminal voltage
// with respect to that voltage and to its six constants (DiodeConstants), and of the
// constants with respect to the part keys, the area and the temperature.
#pragma once

#include <array>

#include "knee/diode_law.h"
#include "knee/sensitivity.h"

namespace knee::internal {

// The constants of DiodeConstants that the law reads, in this order.
enum DiodeConstant { kIs, kNVt, kRs, kIbr, kNbrVt, kVbr };
inline constexpr int kDiodeConstantCount = 6;
using ConstantSlopes = std::array<double, kDiodeConstantCount>;

// A diode at terminal voltage v: its current I, junction voltage vj and small-signal
// resistance rd = 1/g + rs, each with d/dv and d/dc (c a constant) at fixed v.
struct DiodeLocalSlopes {
  double vj = 0, current = 0, rd = 0;
  double di_dv = 0, dvj_dv = 0, drd_dv = 0;
  ConstantSlopes di{}, dvj{}, drd{};
};
// `guess` starts the junction-voltage search (as JunctionVoltageAt).
DiodeLocalSlopes LocalSlopes(const DiodeConstants& d, double v, double guess);
// LocalSlopes' di alone: what the devices' pass needs for every diode. `scales` is
// ScalesOf(d), which the caller keeps per diode basis (the same numbers, fewer divisions).
ConstantSlopes CurrentSlopes(const DiodeConstants& d, const JunctionScales& scales, double v,
                             double guess);

// d(constant)/d(part key) and d(constant)/d(temperature, degC) of one diode (part model,
// area, temperature); the area's column is ConstantsAreaSlopes (it needs only d).
struct ConstantJacobian {
  std::array<ConstantSlopes, kModelKeyCount> key{};  // key[k][c] = dc / d key k
  ConstantSlopes temp{};                             // dc / d temperature
};
ConstantJacobian ComputeConstantJacobian(const DiodeModel& model, double area, double temp_celsius);
// dc / d area.
ConstantSlopes ConstantsAreaSlopes(const DiodeConstants& d, double area);

// Adds sum_c s[c] * dc/dp to *gradient for every p that diode `element` of `circuit`
// reads: its area, its part's keys and its own temperature or the circuit's. `jacobian`
// and `area_slopes` are the element's (ComputeConstantJacobian, ConstantsAreaSlopes).
void AddConstantSlopes(const Circuit& circuit, int element, const ConstantJacobian& jacobian,
                       const ConstantSlopes& area_slopes, const ConstantSlopes& s,
                       CircuitGradient* gradient);

}  // namespace knee::internal
