// Resolving `vary` statements (netlist-format.md, "Spread: vary") against an elaborated
// circuit: the target, the spread's form, unit and limits, and the rules for each.
#pragma once

#include <optional>

#include "knee/netlist.h"
#include "numbers.h"
#include "syntax.h"

namespace knee {

// The value place of a sweep or vary target: its unit and name for messages (ohms for a
// resistor, degrees Celsius for temp, the key's unit for PART.key, any for a param).
ValuePlace TargetPlace(const SweepTarget& target, const Circuit& circuit);

// One vary statement. `param_value` is the value of the target when it is a param (the
// caller evaluated the params). Errors point at the target, the spread or 'each'.
Result<VaryLine> ResolveVary(const VaryStmt& stmt, const FileName& file, const Netlist& netlist,
                             const Circuit& circuit, std::optional<double> param_value);

}  // namespace knee
