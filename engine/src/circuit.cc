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

int Circuit::SinkOf(int element) const {
  for (const SinkMount& m : sink_mounts) {
    if (m.element == element) return m.sink;
  }
  return -1;
}

bool Circuit::SelfHeated(int element) const {
  const Element& e = elements[static_cast<size_t>(element)];
  if (e.kind != ElementKind::kDiode || e.temp) return false;
  return parts[static_cast<size_t>(e.part)].model.thermal_res || SinkOf(element) >= 0;
}

int Circuit::FindHeatsink(std::string_view name) const {
  return IndexOf(heatsinks, name,
                 [](const Heatsink& sink) -> std::string_view { return sink.name; });
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
