// Solver options from keyword arguments, with the names and rules of the command line's
// solver options (docs/python.md, "Solver options").
#pragma once

#include <pybind11/pybind11.h>

#include "knee/solver.h"

namespace knee::python {

// method ("auto", "potential", "classic"), voltage_tol, current_tol, rel_tol, max_steps,
// limiting and aids ("gmin,source", "none", or a list of names), as --method,
// --voltage-tol, --current-tol, --rel-tol, --max-steps, --no-limiting and --aids; any other
// name raises TypeError, a value breaking a rule of Validate(SolverOptions) ValueError.
SolverOptions SolverOptionsFrom(const pybind11::kwargs& kwargs);

}  // namespace knee::python
