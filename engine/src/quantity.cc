// Reported quantities evaluated on a Solution.
#include "knee/quantity.h"

namespace knee {
namespace {

double At(const std::vector<double>& values, int index) {
  return values.at(static_cast<size_t>(index));
}

}  // namespace

double Evaluate(const Solution& s, const QuantityRef& ref) {
  switch (ref.kind) {
    case QuantityKind::kNodeVoltage:
      return At(s.node_voltage, ref.index);
    case QuantityKind::kElementVoltage:
      return At(s.element_voltage, ref.index);
    case QuantityKind::kElementCurrent:
      return At(s.element_current, ref.index);
    case QuantityKind::kElementPower:
      return At(s.element_voltage, ref.index) * At(s.element_current, ref.index);
    case QuantityKind::kJunctionVoltage:
      return At(s.junction_voltage, ref.index);
    case QuantityKind::kSmallSignalRes:
      return At(s.small_signal_res, ref.index);
    case QuantityKind::kJunctionTemp:
      return At(s.junction_temp, ref.index);
    case QuantityKind::kSinkTemp:
      return At(s.sink_temp, ref.index);
  }
  return 0.0;
}

const char* UnitSymbol(QuantityKind kind) {
  switch (kind) {
    case QuantityKind::kNodeVoltage:
    case QuantityKind::kElementVoltage:
    case QuantityKind::kJunctionVoltage:
      return "V";
    case QuantityKind::kElementCurrent:
      return "A";
    case QuantityKind::kElementPower:
      return "W";
    case QuantityKind::kSmallSignalRes:
      return "Ohm";
    case QuantityKind::kJunctionTemp:
    case QuantityKind::kSinkTemp:
      return "C";
  }
  return "";
}

std::string QuantityName(const Circuit& circuit, const QuantityRef& ref) {
  const auto element = [&]() -> Name {
    return circuit.elements.at(static_cast<size_t>(ref.index)).name;
  };
  switch (ref.kind) {
    case QuantityKind::kNodeVoltage:
      return circuit.nodes.at(static_cast<size_t>(ref.index)) + ".v";
    case QuantityKind::kElementVoltage:
      return element() + ".v";
    case QuantityKind::kElementCurrent:
      return element() + ".i";
    case QuantityKind::kElementPower:
      return element() + ".p";
    case QuantityKind::kJunctionVoltage:
      return element() + ".vj";
    case QuantityKind::kSmallSignalRes:
      return element() + ".rd";
    case QuantityKind::kJunctionTemp:
      return element() + ".tj";
    case QuantityKind::kSinkTemp:
      return circuit.heatsinks.at(static_cast<size_t>(ref.index)).name + ".t";
  }
  return "";
}

}  // namespace knee
