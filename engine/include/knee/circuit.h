// The elaborated circuit: every value resolved to a number in SI units, every node
// and part referred to by index. The parser builds it; the engine solves it.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "knee/result.h"

namespace knee {

inline constexpr int kGroundNode = 0;  // Circuit::nodes[0] is always "gnd"

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

// The members are ordered by size so that no padding sits between them (104 bytes, was
// 136): a circuit of a million stages holds two million elements, twice (the caller's
// copy and the solver's).
struct Element {
  std::string name;
  double value = 0.0;          // Ohm, V or A; unused for diodes
  double area = 1.0;           // diodes: > 0
  std::optional<double> temp;  // diodes: own temperature in degC, overrides Circuit::temp
  SourceLocation where;        // the element's name in its statement
  int node_a = kGroundNode;    // first terminal (anode of a diode, P of a vsource)
  int node_b = kGroundNode;    // second terminal (cathode, N)
  int part = -1;               // diodes: index into Circuit::parts
  ElementKind kind = ElementKind::kResistor;
};

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
  double temp = 25.0;              // degC
  std::vector<std::string> nodes;  // nodes[0] == "gnd"
  std::vector<Part> parts;
  std::vector<Element> elements;
  std::vector<ResistorRating> resistor_ratings;  // in file order; not used by the solver
  std::vector<Heatsink> heatsinks;               // in file order
  std::vector<SinkMount> sink_mounts;            // in file order of the diodes

  Circuit() : nodes{"gnd"} {}

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
};

const char* ElementKindName(ElementKind kind);  // "resistor", "vsource", ...
// The unit of an element's value: "Ohm", "V", "A", or "" for a diode (its part holds it).
const char* ElementValueUnit(ElementKind kind);

}  // namespace knee
