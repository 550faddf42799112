// Rendering of diagnostics for people, and near-name suggestions.
#pragma once

#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "knee/circuit.h"
#include "knee/result.h"

namespace knee {

// Renders one diagnostic as
//   clamp.knee:12:17: error: unknown part 'SGI'; expected the name of a 'part' statement
//      12 | diode Dhi pin -> vdd SGI
//         |                      ^~~
//   hint: did you mean 'SIG'?
//   note: clamp.knee:8:6: 'SIG' is defined here
// `source_text` is the whole netlist; the quoted line is taken from it (omitted when
// the location has no line). Control characters in the quoted line are shown as '?'.
// Without any place (a command-line option, named in the message) it reads
// "knee: error: --set Rx=1k: ...".
std::string FormatDiagnostic(const Diagnostic& diagnostic, std::string_view source_text);
// The same with "warning:" in place of "error:" (a valid netlist that is probably not what
// was meant; docs/errors.md, "Warnings").
std::string FormatWarning(const Diagnostic& diagnostic, std::string_view source_text);
// All of them, each followed by a newline, then "N errors" when there is more than one.
std::string FormatDiagnostics(const std::vector<Diagnostic>& diagnostics,
                              std::string_view source_text);

// The candidate closest to `wrong` by edit distance (case-insensitive ties broken by
// case-sensitive distance), if it is close enough to be a plausible typo; else "".
std::string SuggestName(std::string_view wrong, const std::vector<std::string>& candidates);
// The same over the names of a circuit's nodes (Circuit::nodes).
std::string SuggestNodeName(std::string_view wrong, std::span<const Name> nodes);

}  // namespace knee
