#include "solver_kwargs.h"

#include <fmt/format.h>

#include <string>
#include <vector>

#include "knee/design_steps.h"

namespace py = pybind11;

namespace knee::python {
namespace {

SolverMethod MethodNamed(const std::string& name) {
  for (SolverMethod m : {SolverMethod::kAuto, SolverMethod::kPotential, SolverMethod::kClassic}) {
    if (name == ToString(m)) return m;
  }
  throw py::value_error(
      fmt::format("method='{}': expected 'auto', 'potential' or 'classic'", name));
}

// "gmin,source", "none", or a list of aid names.
void SetAids(const py::handle& value, SolverOptions* options) {
  std::vector<std::string> names;
  if (py::isinstance<py::str>(value)) {
    const std::string text = value.cast<std::string>();
    if (text != "none") names = SplitTopLevel(text, ',');
  } else {
    names = value.cast<std::vector<std::string>>();
  }
  options->gmin_stepping = false;
  options->source_stepping = false;
  for (const std::string& aid : names) {
    if (aid == "gmin") {
      options->gmin_stepping = true;
    } else if (aid == "source") {
      options->source_stepping = true;
    } else {
      throw py::value_error(fmt::format(
          "aids: unknown aid '{}'; expected a comma list of gmin and source, or none", aid));
    }
  }
}

}  // namespace

SolverOptions SolverOptionsFrom(const py::kwargs& kwargs) {
  SolverOptions options;
  for (const auto& [key, value] : kwargs) {
    const std::string name = key.cast<std::string>();
    if (name == "method") {
      options.method = MethodNamed(value.cast<std::string>());
    } else if (name == "voltage_tol") {
      options.abs_voltage_tol = value.cast<double>();
    } else if (name == "current_tol") {
      options.abs_current_tol = value.cast<double>();
    } else if (name == "rel_tol") {
      options.rel_tol = value.cast<double>();
    } else if (name == "max_steps") {
      options.max_newton_steps = value.cast<int>();
    } else if (name == "limiting") {
      options.junction_limiting = value.cast<bool>();
    } else if (name == "aids") {
      SetAids(value, &options);
    } else if (name == "isothermal") {
      options.isothermal = value.cast<bool>();
    } else {
      throw py::type_error(fmt::format(
          "unexpected keyword argument '{}'; the solver options are method, voltage_tol, "
          "current_tol, rel_tol, max_steps, limiting, aids, isothermal",
          name));
    }
  }
  if (std::optional<std::string> problem = Validate(options)) throw py::value_error(*problem);
  return options;
}

}  // namespace knee::python
