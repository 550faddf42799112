#include "errors.h"

#include <fmt/format.h>
#include <pybind11/stl.h>

#include "knee/design_steps.h"
#include "knee/diagnostics.h"

namespace py = pybind11;

namespace knee::python {
namespace {

// Owned by the module (module attributes); these handles only borrow them.
PyObject* netlist_error = nullptr;
PyObject* solve_error = nullptr;

py::object OrNone(int value) { return value > 0 ? py::object(py::int_(value)) : py::none(); }

py::tuple DiagnosticTuple(const Diagnostic& d) {
  return py::make_tuple(d.where.file.str(), OrNone(d.where.line),
                        OrNone(d.where.line > 0 ? d.where.column : 0), d.message, d.hint);
}

// Raises an instance of `type` made from `message` after `fill` has set its attributes.
template <typename Fill>
[[noreturn]] void Raise(PyObject* type, const std::string& message, Fill fill) {
  py::object error = py::reinterpret_borrow<py::object>(type)(message);
  fill(error);
  PyErr_SetObject(type, error.ptr());
  throw py::error_already_set();
}

}  // namespace

void RegisterErrors(py::module_& module) {
  py::object netlist = py::reinterpret_steal<py::object>(
      PyErr_NewExceptionWithDoc("knee.NetlistError",
                                "Input knee rejects: netlist text, an override, a quantity or a "
                                "sweep target.\n\nAttributes: file, line, column (None when the "
                                "problem has no place in the file), message, hint, and "
                                "diagnostics: every problem as (file, line, column, message, "
                                "hint).",
                                PyExc_ValueError, nullptr));
  py::object solve = py::reinterpret_steal<py::object>(PyErr_NewExceptionWithDoc(
      "knee.SolveError",
      "A bias point without a usable solution.\n\nAttributes: status (\"no convergence\", "
      "\"singular matrix\", \"non-finite value\", \"verification failed\", \"no solution\"), "
      "detail, unsettled (nodes and devices still moving), newton_steps.",
      PyExc_RuntimeError, nullptr));
  if (!netlist || !solve) throw py::error_already_set();
  module.attr("NetlistError") = netlist;
  module.attr("SolveError") = solve;
  netlist_error = netlist.ptr();
  solve_error = solve.ptr();
}

void RaiseNetlistError(const std::vector<Diagnostic>& diagnostics, const std::string& source) {
  std::string text = FormatDiagnostics(diagnostics, source);
  while (!text.empty() && text.back() == '\n') text.pop_back();
  Raise(netlist_error, text, [&](py::object& error) {
    const Diagnostic& first = diagnostics.front();
    py::tuple t = DiagnosticTuple(first);
    error.attr("file") = t[0];
    error.attr("line") = t[1];
    error.attr("column") = t[2];
    error.attr("message") = first.message;
    error.attr("hint") = first.hint;
    py::list all;
    for (const Diagnostic& d : diagnostics) all.append(DiagnosticTuple(d));
    error.attr("diagnostics") = all;
  });
}

void RaiseSolveError(const SolveSummary& summary) {
  std::string text = DescribeFailure(summary);
  if (!summary.unsettled.empty()) {
    text += fmt::format("; still moving: {}", fmt::join(summary.unsettled, ", "));
  }
  Raise(solve_error, text, [&](py::object& error) {
    error.attr("status") = ToString(summary.status);
    error.attr("detail") = summary.detail;
    error.attr("unsettled") = py::cast(summary.unsettled);
    error.attr("newton_steps") = summary.newton_steps;
  });
}

}  // namespace knee::python
