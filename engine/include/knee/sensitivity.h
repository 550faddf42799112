// DC sensitivities by the adjoint method (S. W. Director, R. A. Rohrer, "The generalized
// adjoint network and network sensitivities", IEEE Trans. Circuit Theory 16(3), 1969).
// At a solution x of F(x, p) = 0, the derivative of a quantity Q(x, p) with respect to
// every number p of the circuit is dQ/dp = dQ/dp|explicit - lambda^T dF/dp, where
// J^T lambda = dQ/dx and J = dF/dx: one transposed solve per quantity, whatever the
// number of parameters. See docs/sensitivity.md.
#pragma once

#include <array>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/quantity.h"

namespace knee {

// The part keys that a diode's law reads (netlist-format.md, "Diode parameters"); the
// ratings (max_current, ...) are not among them: they do not change the solution.
enum class ModelKey : std::uint8_t {
  kSatCurrent,
  kIdeality,
  kSeriesRes,
  kBreakdownV,
  kBreakdownI,
  kBreakdownIdeality,
  kBreakdownTc,
  kBandgap,
  kSatTempExp,
  kRefTemp,
};
inline constexpr int kModelKeyCount = 10;
const char* ModelKeyName(ModelKey key);  // "sat_current", ...
// The key's value in `model` (breakdown_v: 0 when unset).
double ModelKeyValue(const DiodeModel& model, ModelKey key);
// The unit of the key's values ("A", "", "Ohm", "V", "1/K", "eV", "C").
const char* ModelKeyUnit(ModelKey key);

// One number of the circuit that a derivative can be taken with respect to.
struct SensitivityTarget {
  enum class Kind : std::uint8_t {
    kElementValue,  // Element::value of a resistor or source (index: element)
    kArea,          // a diode's area (index: element)
    kElementTemp,   // a diode's own temp= (index: element)
    kPartKey,       // a key of a part (index: part)
    kCircuitTemp,   // Circuit::temp (degC)
  };
  Kind kind = Kind::kCircuitTemp;
  int index = -1;
  ModelKey key = ModelKey::kSatCurrent;
  bool operator==(const SensitivityTarget&) const = default;
};

// Every number the solution depends on: each resistor's and source's value, each diode's
// area and own temperature, each law key of every part that some diode uses (the
// breakdown keys only where breakdown_v is set), and the circuit's temperature when some
// diode takes it. In element order, then parts in order, then temp.
std::vector<SensitivityTarget> SensitivityTargets(const Circuit& circuit);
// "R1", "D1.area", "D1.temp", "SIG.sat_current", "temp".
std::string TargetName(const Circuit& circuit, const SensitivityTarget& target);
double TargetValue(const Circuit& circuit, const SensitivityTarget& target);
// "Ohm", "V", "A", "", "C", or the part key's unit.
std::string TargetUnit(const Circuit& circuit, const SensitivityTarget& target);
// Sets the target's number in *circuit (finite differences, tolerance corners). The
// caller keeps the value within the netlist's rules (a resistance > 0, ...).
void SetTargetValue(Circuit* circuit, const SensitivityTarget& target, double value);

// dQ/d(every number of the circuit) of one quantity Q.
struct CircuitGradient {
  std::vector<double> value;  // per element: d/d Element::value (0 for diodes)
  std::vector<double> area;   // per element: d/d area (diodes; 0 for others)
  std::vector<double> temp;   // per element: d/d its own temp (diodes with temp=; else 0)
  std::vector<std::array<double, kModelKeyCount>> part;  // per part: d/d each law key
  double circuit_temp = 0.0;  // d/d Circuit::temp, through every diode without temp=

  // Sized for `circuit`, every entry 0.
  void Reset(const Circuit& circuit);
  double At(const SensitivityTarget& target) const;
};

// A quantity to differentiate, as a linear combination of plain quantities: for an
// expression f(q1, q2, ...) at the solution, weight_k = df/dq_k (QuantityExpr::Partials).
struct WeightedQuantity {
  QuantityRef ref;
  double weight = 1.0;
};

}  // namespace knee
