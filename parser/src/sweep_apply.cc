// Setting one swept value on an elaborated circuit, with the same rules as the netlist.
#include <fmt/format.h>

#include <cmath>

#include "knee/diode_law.h"
#include "knee/netlist.h"
#include "part_keys.h"

namespace knee {

std::string SweepTargetUnit(const SweepTarget& target, const Circuit& circuit) {
  switch (target.kind) {
    case SweepTarget::Kind::kTemp:
      return "C";
    case SweepTarget::Kind::kElement:
      return ElementValueUnit(circuit.elements.at(static_cast<size_t>(target.index)).kind);
    case SweepTarget::Kind::kPartKey: {
      const PartKeyInfo* info = FindPartKey(target.key);
      return info ? info->unit : "";
    }
    case SweepTarget::Kind::kParam:
      return "";
  }
  return "";
}

std::string ApplySweepValue(const SweepTarget& target, double value, Circuit* circuit) {
  if (!std::isfinite(value))
    return fmt::format("{} = {} is not a finite number", target.name, value);
  switch (target.kind) {
    case SweepTarget::Kind::kParam:
      return "";
    case SweepTarget::Kind::kTemp:
      if (value <= -kZeroCelsius)
        return fmt::format("temp = {} C is at or below absolute zero", value);
      circuit->temp = value;
      return "";
    case SweepTarget::Kind::kElement: {
      Element& e = circuit->elements[static_cast<size_t>(target.index)];
      if (e.kind == ElementKind::kResistor && !UsableResistance(value)) {
        return fmt::format("{} = {} Ohm: a resistance must be {}", target.name, value,
                           value > 0 ? kResistanceRule : "> 0");
      }
      e.value = value;
      return "";
    }
    case SweepTarget::Kind::kPartKey: {
      const PartKeyInfo* info = FindPartKey(target.key);
      if (info == nullptr) return fmt::format("unknown part key '{}'", target.key);
      if (!PartKeyValueOk(*info, value)) {
        return fmt::format("{} = {}: the value must be {}", target.name, value,
                           PartKeyRule(*info, value));
      }
      SetPartKey(&circuit->parts[static_cast<size_t>(target.index)].model, target.key, value);
      return "";
    }
  }
  return "";
}

}  // namespace knee
