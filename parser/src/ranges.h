// Sweep ranges (netlist-format.md, "Sweep ranges") with the unit of the swept place.
#pragma once

#include <string_view>
#include <vector>

#include "knee/netlist.h"
#include "numbers.h"

namespace knee {

// Most points one range may expand to.
inline constexpr double kMaxSweepPoints = 1e7;

// ExpandRange, with the literals' units checked against `place`.
Result<std::vector<double>> ExpandRangeIn(std::string_view text, const SourceLocation& where,
                                          const ValuePlace& place, bool* logarithmic);

}  // namespace knee
