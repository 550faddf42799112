// The analyses the module offers, each a call of the engine's and parser's own functions
// (the ones the command line calls), with the GIL released while the engine solves.
#pragma once

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "design_state.h"
#include "knee/hand.h"
#include "knee/netlist.h"
#include "knee/solver.h"
#include "knee/sweep.h"

namespace knee::python {

// The quantities to report: None = the netlist's show statements, else every node voltage
// and element current; a string is a comma list as --show takes it; a sequence holds one
// quantity per item. Raises knee.NetlistError.
std::vector<QuantityExpr> ResolveShow(const DesignState& state, const pybind11::handle& show);

// A bias point. Keeps its design state, so that quantities not asked for beforehand can
// still be evaluated on the solution after the Circuit is gone.
struct BiasResult {
  StatePtr state;
  std::vector<QuantityExpr> show;
  std::vector<double> values;  // per show entry
  Solution solution;
  SolveSummary summary;

  // A shown quantity by its text, else any quantity or expression of the circuit.
  double Get(const std::string& quantity) const;
};

// Solves the bias point; raises knee.SolveError when it has no usable solution.
BiasResult SolveBias(StatePtr state, std::vector<QuantityExpr> show, const SolverOptions& options);

// The axes of a sweep: None = the netlist's first sweep statement; else a dict from target
// to values (a sequence or NumPy array of numbers in SI units, or a range text as the
// command line takes it), the first entry the inner loop. Raises knee.NetlistError for an
// unknown target or a bad range, ValueError for an empty axis.
std::vector<SweepAxis> ResolveAxes(const DesignState& state, const pybind11::handle& axes);

// A finished sweep: one NumPy array per column, NaN where a point failed.
struct SweepResult {
  std::vector<std::string> names;  // the axes, then the shown quantities
  std::vector<std::string> units;  // per column ("" when dimensionless or mixed)
  std::vector<pybind11::array_t<double>> columns;
  int axis_count = 0;
  pybind11::array_t<bool> ok;                               // per point: solved
  std::vector<std::pair<long long, std::string>> failures;  // (point, why), point order
  SweepStats stats;

  pybind11::array_t<double> Column(const std::string& name) const;  // KeyError if unknown
};

// Runs the sweep on `jobs` threads (0 = every core, as the command line's default) with
// the command line's block size, so that every number equals the command line's.
SweepResult SolveSweep(const StatePtr& state, const std::vector<SweepAxis>& axes,
                       const std::vector<QuantityExpr>& show, const SolverOptions& options,
                       int jobs);

// knee hand: the exact bias point beside the ideal, constant-drop and piecewise-linear
// models (docs/hand-models.md). Per model, in the order of `models`, the solution when
// the model has an answer (the exact one: when it converged).
struct HandComparison {
  StatePtr state;
  std::vector<QuantityExpr> show;
  std::vector<std::string> models;  // "exact", "ideal", "drop", "pwl"
  std::vector<std::optional<Solution>> solutions;
  std::vector<std::vector<DiodeState>> states;  // per model, per element
  SolveSummary exact;
  std::vector<HandResult> searches;  // per hand model (models[1..])

  // `quantity` evaluated on `model`'s solution; NaN when the model has no answer.
  double Value(const std::string& model, const std::string& quantity) const;
  size_t ModelIndex(const std::string& model) const;  // KeyError if unknown
};

// The exact bias point and the three hand models, as knee hand computes them; raises
// ValueError for settings that break a rule of Validate(HandSettings).
HandComparison CompareHand(StatePtr state, std::vector<QuantityExpr> show,
                           const HandSettings& settings, const SolverOptions& options);

}  // namespace knee::python
