// The steps from a netlist to a solved sweep that every front end takes the same way: the
// command line (cli/) and the Python module (python/) both call these, so that they
// compute the same numbers from the same netlist.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "knee/netlist.h"
#include "knee/result.h"
#include "knee/sweep.h"

namespace knee {

// Netlist files larger than this are refused before they are read whole (docs/errors.md).
inline constexpr long long kMaxNetlistBytes = 1LL << 30;

// The whole text of the netlist file at `path` ("-": standard input), or one diagnostic (no
// line) saying why it cannot be read: missing, a folder, unreadable, or larger than
// kMaxNetlistBytes (a pipe or device is read up to that limit, never to memory's end).
Result<std::string> ReadNetlistFile(const std::string& path);

// Elaborate() with `overrides`, then CheckTopology(): a design that BiasSolver::Create
// accepts. Topology diagnostics without a place are placed in the netlist's file.
Result<Design> ElaborateChecked(const Netlist& netlist, const Overrides& overrides);

// The quantities of a comma list as --show takes it ("pin.v,(a.v - b.v)", commas inside
// parentheses do not separate), every error of every item collected.
Result<std::vector<QuantityExpr>> ParseQuantityList(std::string_view text, const Circuit& circuit,
                                                    const SourceLocation& where,
                                                    const ParamValues* params = nullptr);
// Splits at `separator` outside parentheses: "a,b,(max(c.v,d.v))" -> a | b | (max(c.v,d.v)).
std::vector<std::string> SplitTopLevel(std::string_view text, char separator);

// The quantities a report shows when none are asked for: the design's show statements,
// else every node voltage (gnd excepted) and then every element current.
std::vector<QuantityExpr> DefaultShow(const Design& design);

// The grid of a sweep over `axes` (axis 0 the inner loop).
SweepGrid MakeSweepGrid(const std::vector<SweepAxis>& axes);

// How one sweep point is set on a circuit: param axes re-elaborate `netlist` with
// `overrides` plus the param's value, the other axes set their value directly
// (ApplySweepValue). The returned function keeps its own copies of what it needs.
ApplyPoint MakePointApplier(const Netlist& netlist, const Overrides& overrides,
                            const std::vector<SweepAxis>& axes);

// Why a point has no usable solution, as reports print it: "STATUS: detail" (a no-solution
// detail alone, which says so itself).
std::string DescribeFailure(const SolveSummary& summary);

}  // namespace knee
