// Setting one swept value on an elaborated circuit.
#pragma once

#include <string>
#include <string_view>

#include "knee/circuit.h"
#include "knee/netlist.h"

namespace knee::cli {

// Unit of a part key ("A" for sat_current, "" for dimensionless keys).
std::string PartKeyUnit(std::string_view key);

// Sets the target to `value` in `circuit`; "" or a message naming the rule broken.
// Param targets are applied by re-elaborating the netlist, not here: returns "".
std::string ApplySweepValue(const SweepTarget& target, double value, Circuit* circuit);

}  // namespace knee::cli
