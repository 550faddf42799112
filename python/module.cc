// The Python module `knee` (docs/python.md): knee.load / knee.parse make a Circuit, whose
// bias() and sweep() run the engine and return results that hold NumPy arrays.
#include <fmt/format.h>
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <string>
#include <vector>

#include "analyses.h"
#include "design_state.h"
#include "errors.h"
#include "knee/design_steps.h"
#include "solver_kwargs.h"

namespace py = pybind11;

namespace knee::python {
namespace {

// knee.Circuit: a handle on the current design state; set() swaps in a new state.
struct PyCircuit {
  StatePtr state;
};

std::string PathText(const py::handle& path) {
  return py::module_::import("os").attr("fspath")(path).cast<std::string>();
}

// A set() value as netlist text: numbers as the shortest text that reads back to exactly
// the same double, strings as written ("4k7", "(2*Rbase)").
std::string ValueText(const py::handle& value) {
  if (py::isinstance<py::str>(value)) return value.cast<std::string>();
  const bool number = py::isinstance<py::float_>(value) || py::isinstance<py::int_>(value) ||
                      py::hasattr(value, "__float__");  // NumPy scalars
  if (py::isinstance<py::bool_>(value) || !number) {
    throw py::type_error("set(): expected a number or netlist text such as \"4k7\"");
  }
  return fmt::format("{}", value.cast<double>());
}

Overrides OverridesFrom(const py::handle& sets) {
  Overrides overrides;
  if (sets.is_none()) return overrides;
  for (const auto& [name, value] : sets.cast<py::dict>()) {
    overrides.sets.push_back({name.cast<std::string>(), ValueText(value)});
  }
  return overrides;
}

PyCircuit Load(const py::handle& path, const py::handle& sets) {
  const std::string file = PathText(path);
  Result<std::string> source = ReadNetlistFile(file);
  if (!source) {
    PyErr_SetString(PyExc_OSError, source.errors().front().message.c_str());
    throw py::error_already_set();
  }
  return PyCircuit{MakeState(std::move(source).value(), file, OverridesFrom(sets))};
}

PyCircuit Parse(const std::string& text, const std::string& name, const py::handle& sets) {
  return PyCircuit{MakeState(text, name, OverridesFrom(sets))};
}

std::vector<std::string> Names(const std::vector<std::string>& names, size_t from) {
  return {names.begin() + static_cast<long>(from), names.end()};
}

template <typename T>
std::vector<std::string> NamesOf(const std::vector<T>& items) {
  std::vector<std::string> names;
  for (const T& item : items) names.push_back(item.name);
  return names;
}

std::vector<std::string> MethodNames(const std::vector<SolverMethod>& methods) {
  std::vector<std::string> names;
  for (SolverMethod m : methods) names.push_back(ToString(m));
  return names;
}

py::object ToPandas(const SweepResult& s) {
  py::module_ pandas;
  try {
    pandas = py::module_::import("pandas");
  } catch (py::error_already_set&) {
    throw py::import_error(
        "to_pandas() needs pandas (Debian: apt-get install python3-pandas); the columns are "
        "also there as NumPy arrays: sweep[name], sweep.to_dict()");
  }
  py::dict data;
  for (size_t c = 0; c < s.names.size(); ++c) data[py::str(s.names[c])] = s.columns[c];
  return pandas.attr("DataFrame")(data);
}

void BindCircuit(py::module_& m) {
  py::class_<PyCircuit>(m, "Circuit",
                        "A netlist elaborated and checked, ready to solve (knee.load, knee.parse).")
      .def_property_readonly(
          "file", [](const PyCircuit& c) { return c.state->netlist.file_name(); },
          "The file name used in messages")
      .def_property_readonly("title",
                             [](const PyCircuit& c) { return c.state->design.circuit.title; })
      .def_property_readonly(
          "temp", [](const PyCircuit& c) { return c.state->design.circuit.temp; },
          "The circuit temperature in degrees Celsius")
      .def_property_readonly(
          "nodes", [](const PyCircuit& c) { return c.state->design.circuit.NodeNames(); },
          "Node names; nodes[0] is gnd")
      .def_property_readonly(
          "elements", [](const PyCircuit& c) { return NamesOf(c.state->design.circuit.elements); })
      .def_property_readonly(
          "parts", [](const PyCircuit& c) { return NamesOf(c.state->design.circuit.parts); })
      .def_property_readonly(
          "show",
          [](const PyCircuit& c) {
            std::vector<std::string> texts;
            for (const QuantityExpr& q : DefaultShow(c.state->design)) texts.push_back(q.text());
            return texts;
          },
          "The quantities reported when show= is not given")
      .def_property_readonly(
          "overrides",
          [](const PyCircuit& c) {
            std::vector<std::pair<std::string, std::string>> sets;
            for (const Override& o : c.state->overrides.sets)
              sets.emplace_back(o.name, o.value_text);
            return sets;
          },
          "The set() overrides in force, as (name, netlist text)")
      .def(
          "set",
          [](PyCircuit& c, const std::string& name, const py::handle& value) {
            c.state = WithOverride(c.state, name, ValueText(value));
          },
          py::arg("name"), py::arg("value"),
          "Overrides a param, an element value, PART.key or temp, like --set NAME=VALUE. "
          "Numbers are SI values; strings are netlist text (\"4k7\"). Raises NetlistError "
          "and leaves the circuit as it was.")
      .def(
          "bias",
          [](const PyCircuit& c, const py::object& show, const py::kwargs& solver) {
            const SolverOptions options = SolverOptionsFrom(solver);
            return SolveBias(c.state, ResolveShow(*c.state, show), options);
          },
          py::arg("show") = py::none(),
          "The exact bias point. show: None (the netlist's show statements), a comma list "
          "or a list of quantities. Solver options as keyword arguments. Raises SolveError "
          "when there is no usable solution.")
      .def(
          "sweep",
          [](const PyCircuit& c, const py::object& axes, const py::object& show, int jobs,
             const py::kwargs& solver) {
            const SolverOptions options = SolverOptionsFrom(solver);
            return SolveSweep(c.state, ResolveAxes(*c.state, axes), ResolveShow(*c.state, show),
                              options, jobs);
          },
          py::arg("axes") = py::none(), py::arg("show") = py::none(), py::arg("jobs") = 0,
          "A DC sweep. axes: None (the netlist's first sweep statement) or a dict from target "
          "to values (numbers or a range text like \"-24..24:0.25\"); the first entry is the "
          "inner loop. jobs: threads (0 = every core). Points without a solution are NaN and "
          "listed in .failures.")
      .def(
          "hand",
          [](const PyCircuit& c, const py::object& show, double drop, std::optional<double> on_res,
             std::optional<double> fit_at, const py::kwargs& solver) {
            const SolverOptions options = SolverOptionsFrom(solver);
            HandSettings settings;
            settings.drop = drop;
            settings.on_res = on_res;
            settings.fit_at = fit_at;
            return CompareHand(c.state, ResolveShow(*c.state, show), settings, options);
          },
          py::arg("show") = py::none(), py::arg("drop") = HandSettings{}.drop,
          py::arg("on_res") = py::none(), py::arg("fit_at") = py::none(),
          "The exact bias point beside the ideal, constant-drop and piecewise-linear models, as "
          "knee hand computes them. drop (V), on_res (Ohm) or fit_at (A) as --drop, --on-res, "
          "--fit-at. Solver options as keyword arguments.")
      .def("__repr__", [](const PyCircuit& c) {
        return fmt::format("<knee.Circuit '{}' ({} nodes, {} elements)>",
                           c.state->netlist.file_name(), c.state->design.circuit.nodes.size(),
                           c.state->design.circuit.elements.size());
      });
}

void BindBias(py::module_& m) {
  py::class_<BiasResult>(m, "Bias", "A solved bias point.")
      .def("__getitem__", &BiasResult::Get, py::arg("quantity"),
           "A quantity or expression of quantities, e.g. b[\"pin.v\"], b[\"(a.v - b.v)\"]")
      .def_property_readonly(
          "quantities",
          [](const BiasResult& b) {
            std::vector<std::string> texts;
            for (const QuantityExpr& q : b.show) texts.push_back(q.text());
            return texts;
          },
          "The shown quantities, in order")
      .def(
          "to_dict",
          [](const BiasResult& b) {
            py::dict d;
            for (size_t i = 0; i < b.show.size(); ++i) d[py::str(b.show[i].text())] = b.values[i];
            return d;
          },
          "The shown quantities and their values")
      .def_property_readonly(
          "residual", [](const BiasResult& b) { return b.summary.max_kcl_residual; },
          "Largest KCL residual of the solution in A")
      .def_property_readonly("worst_node", [](const BiasResult& b) { return b.summary.worst_node; })
      .def_property_readonly(
          "solver", [](const BiasResult& b) { return std::string(ToString(b.summary.method)); },
          "The solver that produced the solution: \"potential\" or \"classic\"")
      .def_property_readonly(
          "unique", [](const BiasResult& b) { return b.summary.unique; },
          "The network is monotone, so this solution is the only one")
      .def_property_readonly("newton_steps",
                             [](const BiasResult& b) { return b.summary.newton_steps; })
      .def_property_readonly("aids", [](const BiasResult& b) { return b.summary.aids; })
      .def_property_readonly("undetermined_nodes",
                             [](const BiasResult& b) { return b.summary.undetermined_nodes; })
      .def("__repr__", [](const BiasResult& b) {
        std::string items;
        for (size_t i = 0; i < b.show.size(); ++i) {
          items += fmt::format("{}{}={:.6g}", i ? ", " : "", b.show[i].text(), b.values[i]);
        }
        return fmt::format("<knee.Bias {} residual={:.3g} A>", items, b.summary.max_kcl_residual);
      });
}

py::dict StatesOf(const HandComparison& h, size_t model) {
  py::dict states;
  const Circuit& circuit = h.state->design.circuit;
  if (h.states[model].empty()) return states;
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    if (circuit.elements[e].kind != ElementKind::kDiode) continue;
    states[py::str(circuit.elements[e].name)] = ToString(h.states[model][e]);
  }
  return states;
}

void BindHand(py::module_& m) {
  py::class_<HandComparison>(m, "Hand", "The exact bias point beside the hand models.")
      .def_readonly("models", &HandComparison::models, "\"exact\", \"ideal\", \"drop\", \"pwl\"")
      .def(
          "__getitem__",
          [](const HandComparison& h, const std::string& model) {
            py::dict values;
            for (const QuantityExpr& q : h.show)
              values[py::str(q.text())] = h.Value(model, q.text());
            return values;
          },
          py::arg("model"), "The shown quantities of one model (NaN without an answer)")
      .def("value", &HandComparison::Value, py::arg("model"), py::arg("quantity"),
           "Any quantity or expression on one model's solution (NaN without an answer)")
      .def(
          "answered",
          [](const HandComparison& h, const std::string& model) {
            return h.solutions[h.ModelIndex(model)].has_value();
          },
          py::arg("model"), "The model has an answer (the exact one: the solve converged)")
      .def(
          "states",
          [](const HandComparison& h, const std::string& model) {
            return StatesOf(h, h.ModelIndex(model));
          },
          py::arg("model"), "Each diode's state: \"on\", \"off\" or \"breakdown\"")
      .def(
          "search",
          [](const HandComparison& h, const std::string& model) {
            const size_t index = h.ModelIndex(model);
            if (index == 0) throw py::key_error("the exact model has no state search");
            const HandResult& r = h.searches[index - 1];
            py::dict d;
            d["status"] = ToString(r.status);
            d["exhaustive"] = r.exhaustive;
            d["sets_tried"] = r.sets_tried;
            d["singular_sets"] = r.singular_sets;
            d["consistent_sets"] = r.consistent_sets;
            d["detail"] = r.detail;
            return d;
          },
          py::arg("model"), "The state search of a hand model (docs/hand-models.md)")
      .def_property_readonly(
          "exact_failure",
          [](const HandComparison& h) {
            return h.solutions.front() ? std::string() : DescribeFailure(h.exact);
          },
          "Why the exact solve has no usable solution, or \"\"")
      .def_property_readonly(
          "residual", [](const HandComparison& h) { return h.exact.max_kcl_residual; },
          "Largest KCL residual of the exact solution in A");
}

void BindSweep(py::module_& m) {
  py::class_<SweepResult>(m, "Sweep", "A finished sweep: one NumPy array per column.")
      .def("__getitem__", &SweepResult::Column, py::arg("column"),
           "A column by name (an axis or a shown quantity): a read-only float64 array, one "
           "entry per point, NaN where the point failed")
      .def("__contains__",
           [](const SweepResult& s, const std::string& name) {
             return std::find(s.names.begin(), s.names.end(), name) != s.names.end();
           })
      .def("__len__", [](const SweepResult& s) { return s.ok.size(); })
      .def_readonly("columns", &SweepResult::names, "Column names: the axes, then the quantities")
      .def_property_readonly("axes",
                             [](const SweepResult& s) {
                               return std::vector<std::string>(s.names.begin(),
                                                               s.names.begin() + s.axis_count);
                             })
      .def_property_readonly(
          "quantities",
          [](const SweepResult& s) { return Names(s.names, static_cast<size_t>(s.axis_count)); })
      .def_property_readonly(
          "units",
          [](const SweepResult& s) {
            py::dict d;
            for (size_t c = 0; c < s.names.size(); ++c) d[py::str(s.names[c])] = s.units[c];
            return d;
          },
          "Unit of each column: \"V\", \"A\", \"W\", \"Ohm\", \"C\" or \"\"")
      .def_readonly("ok", &SweepResult::ok, "Per point: True where it has a solution")
      .def_readonly("failures", &SweepResult::failures,
                    "The points without a solution, as (point index, why), in point order")
      .def_property_readonly("points", [](const SweepResult& s) { return s.stats.points; })
      .def_property_readonly("failed", [](const SweepResult& s) { return s.stats.failed; })
      .def_property_readonly("newton_steps",
                             [](const SweepResult& s) { return s.stats.newton_steps; })
      .def_property_readonly("max_newton_steps",
                             [](const SweepResult& s) { return s.stats.max_newton_steps; })
      .def_property_readonly("aids", [](const SweepResult& s) { return s.stats.aids; })
      .def_property_readonly(
          "unique",
          [](const SweepResult& s) { return s.stats.unique && s.stats.points > s.stats.failed; },
          "Every solved point's solution is the only one")
      .def_property_readonly(
          "residual", [](const SweepResult& s) { return s.stats.max_kcl_residual; },
          "Largest KCL residual over the solved points in A")
      .def_property_readonly("worst_node", [](const SweepResult& s) { return s.stats.worst_node; })
      .def_property_readonly("undetermined_nodes",
                             [](const SweepResult& s) { return s.stats.undetermined_nodes; })
      .def_property_readonly(
          "solver", [](const SweepResult& s) { return MethodNames(s.stats.methods); },
          "The solvers that produced the points, in order of first use")
      .def(
          "to_dict",
          [](const SweepResult& s) {
            py::dict d;
            for (size_t c = 0; c < s.names.size(); ++c) d[py::str(s.names[c])] = s.columns[c];
            return d;
          },
          "Every column by name")
      .def("to_pandas", &ToPandas, "A pandas DataFrame of every column (needs pandas)")
      .def("__repr__", [](const SweepResult& s) {
        return fmt::format("<knee.Sweep {} points over {} ({} failed), columns {}>", s.stats.points,
                           fmt::join(s.names.begin(), s.names.begin() + s.axis_count, " x "),
                           s.stats.failed, fmt::join(s.names, ", "));
      });
}

}  // namespace

}  // namespace knee::python

using namespace knee::python;  // NOLINT: the module definition names every piece

PYBIND11_MODULE(knee, m) {
  m.doc() = "knee: exact DC bias points and sweeps of diode networks (docs/python.md)";
  m.attr("__version__") = KNEE_VERSION;
  RegisterErrors(m);
  BindCircuit(m);
  BindBias(m);
  BindSweep(m);
  BindHand(m);
  m.def("load", &Load, py::arg("path"), py::arg("set") = py::none(),
        "Reads, parses and checks a netlist file. set: a dict of overrides, as Circuit.set. "
        "Raises OSError when the file cannot be read, NetlistError for a bad netlist.");
  m.def("parse", &Parse, py::arg("text"), py::arg("name") = "<string>", py::arg("set") = py::none(),
        "Parses and checks netlist text; name is the file name used in messages.");
}
