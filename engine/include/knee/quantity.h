// Reported quantities (netlist-format.md, "Quantities") evaluated on a Solution.
#pragma once

#include <string>

#include "knee/circuit.h"
#include "knee/solver.h"

namespace knee {

enum class QuantityKind {
  kNodeVoltage,      // NODE.v, index = node
  kElementVoltage,   // ELEMENT.v, index = element
  kElementCurrent,   // ELEMENT.i
  kElementPower,     // ELEMENT.p (absorbed, v*i)
  kJunctionVoltage,  // DIODE.vj
  kSmallSignalRes,   // DIODE.rd
  kJunctionTemp,     // DIODE.tj (degC), index = element
  kSinkTemp,         // HEATSINK.t (degC), index = Circuit::heatsinks
};

struct QuantityRef {
  QuantityKind kind = QuantityKind::kNodeVoltage;
  int index = 0;
};

double Evaluate(const Solution& solution, const QuantityRef& ref);
const char* UnitSymbol(QuantityKind kind);  // "V", "A", "W", "Ohm", "C"
std::string QuantityName(const Circuit& circuit, const QuantityRef& ref);  // "pin.v"

}  // namespace knee
