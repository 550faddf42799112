// What a knee.Circuit stands for: a parsed netlist, its overrides and the elaborated,
// topology-checked design. A state never changes once made; Circuit.set() makes a new
// one. Results keep the state they came from, so they outlive their Circuit and are not
// disturbed by later set() calls, and a sweep running without the GIL reads a state no
// other thread can change.
#pragma once

#include <memory>
#include <string>

#include "knee/netlist.h"

namespace knee::python {

struct DesignState {
  std::string source;  // the whole netlist text, for quoting lines in errors
  Netlist netlist;
  Overrides overrides;
  Design design;
};
using StatePtr = std::shared_ptr<const DesignState>;

// Parses `source` (named `file_name` in messages) and elaborates it with `overrides`;
// raises knee.NetlistError.
StatePtr MakeState(std::string source, const std::string& file_name, const Overrides& overrides);

// `state` with the override name=value_text replacing any earlier one of that name (a
// later set() of a name wins, as --set does); raises knee.NetlistError and leaves `state`
// as it was.
StatePtr WithOverride(const StatePtr& state, const std::string& name,
                      const std::string& value_text);

}  // namespace knee::python
