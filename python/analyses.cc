#include "analyses.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <mutex>
#include <thread>

#include "errors.h"
#include "knee/design_steps.h"

namespace py = pybind11;

namespace knee::python {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

SourceLocation Place(const char* what) {
  SourceLocation where;
  where.file = what;
  return where;
}

QuantityExpr ParseOne(const DesignState& state, const std::string& text) {
  Result<QuantityExpr> q = ParseQuantity(text, state.design.circuit, Place("show"));
  if (!q) RaiseNetlistError(q.errors(), "");
  return std::move(q).value();
}

py::array_t<double> FilledArray(long long n, double value) {
  py::array_t<double> a(static_cast<py::ssize_t>(n));
  std::fill_n(a.mutable_data(), n, value);
  return a;
}

// A result array's values stay as computed: views handed out cannot change them.
void MakeReadOnly(const py::array& a) { a.attr("setflags")(py::arg("write") = false); }

}  // namespace

std::vector<QuantityExpr> ResolveShow(const DesignState& state, const py::handle& show) {
  if (show.is_none()) return DefaultShow(state.design);
  if (py::isinstance<py::str>(show)) {
    Result<std::vector<QuantityExpr>> list =
        ParseQuantityList(show.cast<std::string>(), state.design.circuit, Place("show"));
    if (!list) RaiseNetlistError(list.errors(), "");
    return std::move(list).value();
  }
  std::vector<QuantityExpr> quantities;
  std::vector<Diagnostic> errors;
  for (const py::handle item : show) {
    Result<QuantityExpr> q =
        ParseQuantity(item.cast<std::string>(), state.design.circuit, Place("show"));
    if (q) {
      quantities.push_back(std::move(q).value());
    } else {
      for (const Diagnostic& d : q.errors()) errors.push_back(d);
    }
  }
  if (!errors.empty()) RaiseNetlistError(errors, "");
  return quantities;
}

double BiasResult::Get(const std::string& quantity) const {
  for (size_t i = 0; i < show.size(); ++i) {
    if (show[i].text() == quantity) return values[i];
  }
  return ParseOne(*state, quantity).Evaluate(solution);
}

BiasResult SolveBias(StatePtr state, std::vector<QuantityExpr> show, const SolverOptions& options) {
  BiasResult result;
  result.state = std::move(state);
  result.show = std::move(show);
  const Circuit& circuit = result.state->design.circuit;
  Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit, options);
  if (!solver) RaiseNetlistError(solver.errors(), result.state->source);
  (*solver)->set_single_point(true);
  {
    py::gil_scoped_release release;
    result.summary = (*solver)->Solve(&result.solution);
  }
  if (result.summary.status != SolveStatus::kConverged) RaiseSolveError(result.summary);
  for (const QuantityExpr& q : result.show) result.values.push_back(q.Evaluate(result.solution));
  return result;
}

std::vector<SweepAxis> ResolveAxes(const DesignState& state, const py::handle& axes) {
  if (axes.is_none()) {
    if (state.design.sweeps.empty()) {
      throw py::value_error(
          "the netlist has no sweep statement; give the axes, e.g. "
          "sweep({\"Vin\": numpy.linspace(0, 5, 51)})");
    }
    return state.design.sweeps.front();
  }
  if (!py::isinstance<py::dict>(axes)) {
    throw py::type_error(
        "sweep axes: expected a dict from target to values, e.g. "
        "{\"Vin\": numpy.linspace(0, 5, 51)} or {\"Vin\": \"0..5:0.1\"}");
  }
  std::vector<SweepAxis> resolved;
  for (const auto& [key, value] : axes.cast<py::dict>()) {
    const std::string target = key.cast<std::string>();
    if (py::isinstance<py::str>(value)) {
      Result<SweepAxis> axis =
          ResolveSweepAxis(target, value.cast<std::string>(), state.netlist, state.design.circuit,
                           Place("sweep"), Place("sweep"));
      if (!axis) RaiseNetlistError(axis.errors(), "");
      resolved.push_back(std::move(axis).value());
      continue;
    }
    Result<SweepTarget> resolved_target =
        ResolveSweepTarget(target, state.netlist, state.design.circuit, Place("sweep"));
    if (!resolved_target) RaiseNetlistError(resolved_target.errors(), "");
    SweepAxis axis;
    axis.target = std::move(resolved_target).value();
    const auto values =
        py::array_t<double, py::array::c_style | py::array::forcecast>::ensure(value);
    if (!values) throw py::type_error(fmt::format("sweep axis '{}': expected numbers", target));
    axis.values.assign(values.data(), values.data() + values.size());
    if (axis.values.empty()) {
      throw py::value_error(fmt::format("sweep axis '{}' has no values", target));
    }
    resolved.push_back(std::move(axis));
  }
  if (resolved.empty()) throw py::value_error("sweep: no axes given");
  return resolved;
}

py::array_t<double> SweepResult::Column(const std::string& name) const {
  for (size_t c = 0; c < names.size(); ++c) {
    if (names[c] == name) return columns[c];
  }
  throw py::key_error(fmt::format("'{}' is not a column of this sweep; the columns are: {}", name,
                                  fmt::join(names, ", ")));
}

SweepResult SolveSweep(const StatePtr& state, const std::vector<SweepAxis>& axes,
                       const std::vector<QuantityExpr>& show, const SolverOptions& options,
                       int jobs) {
  if (jobs < 0)
    throw py::value_error(fmt::format("jobs={}: expected N >= 1, or 0 for every core", jobs));
  const Circuit& base = state->design.circuit;
  SweepResult result;
  result.axis_count = static_cast<int>(axes.size());
  for (const SweepAxis& axis : axes) {
    result.names.push_back(axis.target.name);
    result.units.push_back(SweepTargetUnit(axis.target, base));
  }
  for (const QuantityExpr& q : show) {
    result.names.push_back(q.text());
    result.units.push_back(q.unit());
  }

  const SweepGrid grid = MakeSweepGrid(axes);
  SweepOptions sweep_options;
  sweep_options.jobs =
      jobs > 0 ? jobs : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const SweepBlocks blocks = CutIntoBlocks(grid, sweep_options.block_size);
  const long long points = grid.PointCount();

  // Every array is made while the GIL is held; the workers only write numbers into them.
  std::vector<double*> column_data;
  for (size_t c = 0; c < result.names.size(); ++c) {
    result.columns.push_back(FilledArray(points, kNaN));
    column_data.push_back(result.columns.back().mutable_data());
  }
  result.ok = py::array_t<bool>(static_cast<py::ssize_t>(points));
  bool* ok = result.ok.mutable_data();
  std::fill_n(ok, points, false);

  std::mutex failures_mutex;
  const size_t axis_count = axes.size();
  PointSink sink = [&](long long index, const SolveSummary& summary, const Solution* solution) {
    thread_local std::vector<long long> indices;  // per worker thread, reused across points
    indices.resize(axis_count);
    grid.Indices(index, indices);
    for (size_t a = 0; a < axis_count; ++a) column_data[a][index] = grid.axes[a][indices[a]];
    if (solution) {
      for (size_t q = 0; q < show.size(); ++q) {
        column_data[axis_count + q][index] = show[q].Evaluate(*solution);
      }
      ok[index] = true;
    } else {
      std::lock_guard<std::mutex> lock(failures_mutex);
      result.failures.emplace_back(index, DescribeFailure(summary));
    }
  };
  const ApplyPoint apply = MakePointApplier(state->netlist, state->overrides, axes);
  {
    py::gil_scoped_release release;
    result.stats =
        RunSweep(base, grid, blocks, 0, blocks.total, apply, options, sweep_options, sink);
  }
  if (!result.stats.setup_error.empty()) {
    throw py::value_error(result.stats.setup_error);
  }
  std::sort(result.failures.begin(), result.failures.end());
  for (const py::array_t<double>& column : result.columns) MakeReadOnly(column);
  MakeReadOnly(result.ok);
  return result;
}

size_t HandComparison::ModelIndex(const std::string& model) const {
  for (size_t m = 0; m < models.size(); ++m) {
    if (models[m] == model) return m;
  }
  throw py::key_error(fmt::format("'{}' is not a model of knee hand; the models are: {}", model,
                                  fmt::join(models, ", ")));
}

double HandComparison::Value(const std::string& model, const std::string& quantity) const {
  const std::optional<Solution>& solution = solutions[ModelIndex(model)];
  for (size_t q = 0; q < show.size(); ++q) {
    if (show[q].text() == quantity) return solution ? show[q].Evaluate(*solution) : kNaN;
  }
  const QuantityExpr q = ParseOne(*state, quantity);
  return solution ? q.Evaluate(*solution) : kNaN;
}

HandComparison CompareHand(StatePtr state, std::vector<QuantityExpr> show,
                           const HandSettings& settings, const SolverOptions& options) {
  if (std::optional<std::string> problem = Validate(settings)) throw py::value_error(*problem);
  HandComparison result;
  result.state = std::move(state);
  result.show = std::move(show);
  const Circuit& circuit = result.state->design.circuit;
  Result<std::vector<HandModel>> models = MakeHandModels(circuit, settings);
  if (!models) RaiseNetlistError(models.errors(), result.state->source);
  Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit, options);
  if (!solver) RaiseNetlistError(solver.errors(), result.state->source);

  (*solver)->set_single_point(true);
  py::gil_scoped_release release;
  Solution exact;
  result.exact = (*solver)->Solve(&exact);
  const bool exact_ok = result.exact.status == SolveStatus::kConverged;
  result.models.push_back("exact");
  result.states.push_back(exact_ok ? ExactStates(circuit, exact) : std::vector<DiodeState>{});
  if (exact_ok) result.solutions.emplace_back(std::move(exact));
  if (!exact_ok) result.solutions.emplace_back();
  HandSearchOptions search;
  if (exact_ok) search.start = result.states.front();  // as knee hand starts its search
  for (const HandModel& model : *models) {
    result.searches.push_back(SolveHand(circuit, model, search));
    const HandResult& r = result.searches.back();
    result.models.push_back(ToString(model.kind));
    if (HasAnswer(r.status)) {
      result.solutions.emplace_back(r.solutions.front().solution);
      result.states.push_back(r.solutions.front().states);
    } else {
      result.solutions.emplace_back();
      result.states.emplace_back();
    }
  }
  return result;
}

}  // namespace knee::python
