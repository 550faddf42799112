// Name lookups on the elaborated circuit.
#include "knee/circuit.h"

namespace knee {
namespace {

template <typename Items, typename NameOf>
int IndexOf(const Items& items, std::string_view name, NameOf name_of) {
  for (int i = 0; i < static_cast<int>(items.size()); ++i) {
    if (name_of(items[static_cast<size_t>(i)]) == name) return i;
  }
  return -1;
}

}  // namespace

int Circuit::FindNode(std::string_view name) const {
  if (name == "0" || name == "gnd") return kGroundNode;
  return IndexOf(nodes, name, [](const std::string& node) -> std::string_view { return node; });
}

int Circuit::FindElement(std::string_view name) const {
  return IndexOf(elements, name,
                 [](const Element& element) -> std::string_view { return element.name; });
}

int Circuit::FindPart(std::string_view name) const {
  return IndexOf(parts, name, [](const Part& part) -> std::string_view { return part.name; });
}

const char* ElementKindName(ElementKind kind) {
  switch (kind) {
    case ElementKind::kResistor:
      return "resistor";
    case ElementKind::kVoltageSource:
      return "vsource";
    case ElementKind::kCurrentSource:
      return "isource";
    case ElementKind::kDiode:
      return "diode";
  }
  return "unknown";
}

const char* ElementValueUnit(ElementKind kind) {
  switch (kind) {
    case ElementKind::kResistor:
      return "Ohm";
    case ElementKind::kVoltageSource:
      return "V";
    case ElementKind::kCurrentSource:
      return "A";
    case ElementKind::kDiode:
      return "";
  }
  return "";
}

}  // namespace knee
