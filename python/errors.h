// The module's exceptions: knee.NetlistError for every input knee rejects (netlist text,
// overrides, quantities, sweep targets), knee.SolveError for a bias point without a
// usable solution. Both carry their facts as attributes (docs/python.md, "Errors").
#pragma once

#include <pybind11/pybind11.h>

#include <string>
#include <vector>

#include "knee/result.h"
#include "knee/solver.h"

namespace knee::python {

// Creates both exception types in `module`; called once at import.
void RegisterErrors(pybind11::module_& module);

// Raises knee.NetlistError for `diagnostics` (at least one); `source` is the netlist text
// the message quotes lines from ("" when the diagnostics are not about the file).
[[noreturn]] void RaiseNetlistError(const std::vector<Diagnostic>& diagnostics,
                                    const std::string& source);

// Raises knee.SolveError for a solve that ended without a usable solution.
[[noreturn]] void RaiseSolveError(const SolveSummary& summary);

}  // namespace knee::python
