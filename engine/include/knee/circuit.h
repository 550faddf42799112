// The elaborated circuit: every value resolved to a number in SI units, every node
// and part referred to by index. The parser builds it; the engine solves it.
#pragma once

#include <fmt/core.h>

#include <cstdint>
#include <cstring>
#include <iosfwd>
#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "knee/result.h"

namespace knee {

inline constexpr int kGroundNode = 0;  // Circuit::nodes[0] is always "gnd"

// The name of a node or an element: 8 bytes that point at its text in a NameStore (a
// length, then the characters and a NUL). A million-stage netlist names three million
// nodes and elements; a std::string each would be 32 bytes before its text. A Name stays
// valid while some circuit that holds its store lives (copies of a circuit share it).
class Name {
 public:
  Name() = default;  // ""
  // Over text laid out as a NameStore keeps it (Circuit's "gnd" is a static one).
  explicit Name(const char* stored) : stored_(stored) {}

  std::string_view view() const {
    if (stored_ == nullptr) return {};
    std::uint32_t size = 0;
    std::memcpy(&size, stored_, sizeof size);
    return {stored_ + sizeof size, size};
  }
  const char* c_str() const { return stored_ == nullptr ? "" : stored_ + sizeof(std::uint32_t); }
  std::string str() const { return std::string(view()); }
  std::size_t size() const { return view().size(); }
  bool empty() const { return view().empty(); }
  // Implicit, so that a name reads as the string it is.
  operator std::string_view() const { return view(); }  // NOLINT
  operator std::string() const { return str(); }        // NOLINT

  friend bool operator==(const Name& a, const Name& b) { return a.view() == b.view(); }
  friend bool operator==(const Name& a, std::string_view b) { return a.view() == b; }
  friend bool operator==(const Name& a, const std::string& b) { return a.view() == b; }
  friend bool operator==(const Name& a, const char* b) { return a.view() == b; }
  friend std::string operator+(const Name& a, std::string_view b) { return a.str().append(b); }
  friend std::string operator+(const Name& a, const char* b) { return a.str().append(b); }
  friend std::string operator+(const Name& a, const std::string& b) { return a.str().append(b); }
  friend std::string operator+(std::string a, const Name& b) { return a.append(b.view()); }
  friend std::string operator+(const char* a, const Name& b) {
    return std::string(a).append(b.view());
  }

 private:
  const char* stored_ = nullptr;
};

std::ostream& operator<<(std::ostream& out, const Name& name);  // its text

// Append-only storage of names in blocks that never move, one allocation per block (64 KiB)
// rather than one per name: a Name into it stays valid while the store lives.
class NameStore {
 public:
  Name Keep(std::string_view text);

 private:
  static constexpr std::size_t kBlockBytes = std::size_t{1} << 16;
  std::vector<std::unique_ptr<char[]>> blocks_;
  std::size_t used_ = kBlockBytes;  // bytes used in blocks_.back()
};

// Parameters of a diode part (docs/netlist-format.md, "Part keys"; the source of each
// default is in docs/model.md, "Defaults and their sources"). SI units; temperatures in
// degrees Celsius.
struct DiodeModel {
  double sat_current = 1e-14;         // A at ref_temp, > 0
  double ideality = 1.0;              // emission coefficient, > 0
  double series_res = 0.0;            // Ohm, >= 0
  std::optional<double> breakdown_v;  // V, > 0; unset = no breakdown
  double breakdown_i = 1e-3;          // A, > 0: reverse current at breakdown_v
  double breakdown_ideality = 1.0;    // > 0
  double breakdown_tc = 0.0;          // 1/K
  double bandgap = 1.12;              // eV, > 0: silicon at 300 K (Sze & Ng, 3rd ed., 2007)
  double sat_temp_exp = 3.0;
  double ref_temp = 25.0;               // degC, above absolute zero
  std::optional<double> max_current;    // A, rated forward current
  std::optional<double> max_reverse_v;  // V, rated reverse voltage
  std::optional<double> max_power;      // W, rated dissipation
  // Self-heating (docs/thermal.md): K/W, >= 0, junction to ambient, or to the sink of a
  // diode mounted with sink=; unset = the diode stays at the ambient (or its sink's)
  // temperature.
  std::optional<double> thermal_res;
  std::optional<double> max_junction_temp;  // degC, rated junction temperature
};

struct Part {
  std::string name;
  DiodeModel model;
  SourceLocation where;
};

enum class ElementKind : std::uint8_t { kResistor, kVoltageSource, kCurrentSource, kDiode };

// A diode's own temperature in degC, or none: 8 bytes (a std::optional<double> takes 16),
// with none stored as NaN. No temperature is NaN: Elaborate rejects a temp= that is not
// above absolute zero, and a NaN is not.
class OwnTemp {
 public:
  OwnTemp() = default;
  OwnTemp(double celsius) : celsius_(celsius) {}           // NOLINT: reads as the number it holds
  OwnTemp(std::nullopt_t) {}                               // NOLINT: as std::optional does
  bool has_value() const { return celsius_ == celsius_; }  // false for NaN only
  explicit operator bool() const { return has_value(); }
  double operator*() const { return celsius_; }

  friend bool operator==(const OwnTemp& a, const OwnTemp& b) {
    return a.has_value() == b.has_value() && (!a.has_value() || a.celsius_ == b.celsius_);
  }
  friend bool operator==(const OwnTemp& a, double b) { return a.has_value() && a.celsius_ == b; }

 private:
  double celsius_ = std::numeric_limits<double>::quiet_NaN();
};

// Where an element's name is written: a SourceLocation in 16 bytes instead of 24 (a
// column and a length of a name on one line fit 16 bits; a physical line of a netlist has
// at most 10000 bytes and a name at most 256). Reads as a SourceLocation.
struct ElementLocation {
  FileName file;
  int line = 0;
  std::uint16_t column = 0;
  std::uint16_t length = 1;

  ElementLocation() = default;
  // Columns and lengths beyond 16 bits (text not from a netlist file) are clamped.
  ElementLocation(const SourceLocation& where)  // NOLINT: assigned from a SourceLocation
      : file(where.file),
        line(where.line),
        column(Clamp(where.column)),
        length(Clamp(where.length)) {}
  operator SourceLocation() const {  // NOLINT: reads as a SourceLocation
    return SourceLocation{file, line, column, length};
  }

 private:
  static std::uint16_t Clamp(int v) {
    return static_cast<std::uint16_t>(v < 0 ? 0 : v > 65535 ? 65535 : v);
  }
};

// The members are ordered by size so that no padding sits between them (64 bytes; 136
// with a std::string name, a std::optional temp, a SourceLocation and unordered members):
// a circuit of a million stages holds two million elements.
struct Element {
  Name name;                 // in its circuit's names (Circuit::Keep)
  double value = 0.0;        // Ohm, V or A; unused for diodes
  double area = 1.0;         // diodes: > 0
  OwnTemp temp;              // diodes: own temperature in degC, overrides Circuit::temp
  ElementLocation where;     // the element's name in its statement
  int node_a = kGroundNode;  // first terminal (anode of a diode, P of a vsource)
  int node_b = kGroundNode;  // second terminal (cathode, N)
  int part = -1;             // diodes: index into Circuit::parts
  ElementKind kind = ElementKind::kResistor;
};
static_assert(sizeof(void*) != 8 || sizeof(Element) == 64, "Element packs to 64 bytes");

// A resistor's rated dissipation (netlist-format.md, "Resistor ratings"), for stress checks.
struct ResistorRating {
  int element = -1;      // index into Circuit::elements, a resistor
  double max_power = 0;  // W, > 0
};

// A heatsink (netlist-format.md, "Self-heating"): a thermal node that carries the
// dissipation of every diode mounted on it to the ambient through thermal_res.
struct Heatsink {
  std::string name;
  double thermal_res = 0;  // K/W, >= 0, sink to ambient
  SourceLocation where;
};

// A diode mounted on a heatsink with sink=NAME.
struct SinkMount {
  int element = -1;  // index into Circuit::elements, a diode without temp=
  int sink = -1;     // index into Circuit::heatsinks
};

struct Circuit {
  std::string title;
  double temp = 25.0;       // degC
  std::vector<Name> nodes;  // nodes[0] == "gnd"; in names()
  std::vector<Part> parts;
  std::vector<Element> elements;
  std::vector<ResistorRating> resistor_ratings;  // in file order; not used by the solver
  std::vector<Heatsink> heatsinks;               // in file order
  std::vector<SinkMount> sink_mounts;            // in file order of the diodes

  Circuit();

  // The text of `name` kept in this circuit's names, for an Element::name or a node (a
  // copy of a circuit shares its names with the original, so the copy may add its own).
  Name Keep(std::string_view name) { return names_->Keep(name); }
  // Appends a node named `name` (not checked against the others) and returns its index.
  int AddNode(std::string_view name);

  // Index of the named node/element/part, or -1. "0" and "gnd" both find node 0.
  int FindNode(std::string_view name) const;
  int FindElement(std::string_view name) const;
  int FindPart(std::string_view name) const;
  int FindHeatsink(std::string_view name) const;
  // Temperature of a diode element in degC: its own temp= or the circuit's.
  double DeviceTemp(const Element& element) const { return element.temp ? *element.temp : temp; }
  // The heatsink a diode is mounted on (sink=), or -1.
  int SinkOf(int element) const;
  // Whether a diode's junction temperature is solved with the circuit (docs/thermal.md): a
  // diode without temp= whose part has thermal_res or that is mounted on a heatsink.
  bool SelfHeated(int element) const;
  // Every node name, nodes[0] ("gnd") first, as strings (for name suggestions).
  std::vector<std::string> NodeNames() const;

 private:
  std::shared_ptr<NameStore> names_;
};

const char* ElementKindName(ElementKind kind);  // "resistor", "vsource", ...
// The unit of an element's value: "Ohm", "V", "A", or "" for a diode (its part holds it).
const char* ElementValueUnit(ElementKind kind);

}  // namespace knee

// Names format as their text.
template <>
struct fmt::formatter<knee::Name> : fmt::formatter<std::string_view> {
  template <typename FormatContext>
  auto format(const knee::Name& name, FormatContext& ctx) const {
    return fmt::formatter<std::string_view>::format(name.view(), ctx);
  }
};
