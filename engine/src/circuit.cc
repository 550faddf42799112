// Name storage and name lookups on the elaborated circuit.
#include "knee/circuit.h"

#include <algorithm>
#include <bit>
#include <ostream>

namespace knee {
namespace {

// "gnd" laid out as a NameStore keeps a name: its length, the characters and a NUL.
alignas(std::uint32_t) constexpr char kGroundText[] = {3, 0, 0, 0, 'g', 'n', 'd', 0};
static_assert(std::endian::native == std::endian::little, "kGroundText spells the length");

template <typename Items, typename NameOf>
int IndexOf(const Items& items, std::string_view name, NameOf name_of) {
  for (int i = 0; i < static_cast<int>(items.size()); ++i) {
    if (name_of(items[static_cast<size_t>(i)]) == name) return i;
  }
  return -1;
}

}  // namespace

std::ostream& operator<<(std::ostream& out, const Name& name) { return out << name.view(); }

Name NameStore::Keep(std::string_view text) {
  const auto size = static_cast<std::uint32_t>(text.size());
  const std::size_t need = sizeof size + text.size() + 1;
  if (need > kBlockBytes - used_) {
    blocks_.push_back(std::make_unique<char[]>(std::max(need, kBlockBytes)));
    used_ = 0;
  }
  char* at = blocks_.back().get() + used_;
  std::memcpy(at, &size, sizeof size);
  std::memcpy(at + sizeof size, text.data(), text.size());
  at[sizeof size + text.size()] = '\0';
  used_ += need;
  return Name(at);
}

Circuit::Circuit() : nodes{Name(kGroundText)}, names_(std::make_shared<NameStore>()) {}

int Circuit::AddNode(std::string_view name) {
  nodes.push_back(Keep(name));
  return static_cast<int>(nodes.size()) - 1;
}

std::vector<std::string> Circuit::NodeNames() const {
  return std::vector<std::string>(nodes.begin(), nodes.end());
}

int Circuit::FindNode(std::string_view name) const {
  if (name == "0" || name == "gnd") return kGroundNode;
  return IndexOf(nodes, name, [](const Name& node) -> std::string_view { return node; });
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
