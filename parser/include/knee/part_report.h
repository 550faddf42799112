// Every key of a part as the netlist resolved it (knee check --parts): the value in use,
// its unit, and whether the file or a --set gave it or it is the default.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/netlist.h"

namespace knee {

struct ResolvedPartKey {
  std::string key;              // "sat_current"
  std::string unit;             // "A", "V", "W", "Ohm", "C", "1/K", "eV" or "" (plain number)
  std::optional<double> value;  // nullopt: not set (no breakdown, no rating)
  bool given = false;           // written on the part line or set by --set PART.key=
};

// In the order of the key table (docs/netlist-format.md, "Part keys").
std::vector<ResolvedPartKey> ResolvePartKeys(const Netlist& netlist, const Overrides& overrides,
                                             const Part& part);

}  // namespace knee
