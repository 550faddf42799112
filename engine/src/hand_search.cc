// The state search of the simplified models (docs/hand-models.md, "State search"): each
// state set is a linear circuit solved by sparse LU (KLU), so that a set of a large
// network costs about as much as the network's size, not its cube; a set is consistent when every
// conducting diode carries current in its direction and every blocking one sees a
// voltage between -Vbr and its on-voltage.
#include <fmt/format.h>

#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <limits>
#include <set>

#include "check.h"
#include "klu_solver.h"
#include "knee/hand.h"

namespace knee {
namespace {

constexpr size_t kMaxKeptSolutions = 8;

struct Violation {
  int diode = -1;   // element index, or -1 when the set is consistent
  double size = 0;  // normalised size of the worst violation
  DiodeState fix = DiodeState::kOff;
};

// The worst violation of a solved set, with the state that would remove it.
Violation Check(const Circuit& circuit, const HandModel& model,
                const std::vector<DiodeState>& states, const Solution& s,
                const HandSearchOptions& options, std::vector<Violation>* all) {
  double v_scale = 0, i_scale = 0;
  for (double v : s.node_voltage) v_scale = std::max(v_scale, std::fabs(v));
  for (double i : s.element_current) i_scale = std::max(i_scale, std::fabs(i));
  const double v_tol = options.voltage_tol + 1e-9 * v_scale;
  const double i_tol = options.current_tol + 1e-9 * i_scale;
  Violation worst;
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    if (circuit.elements[e].kind != ElementKind::kDiode) continue;
    const DiodeLines& l = model.lines[e];
    const double v = s.element_voltage[e];
    const double i = s.element_current[e];
    Violation here;
    switch (states[e]) {
      case DiodeState::kOn:
        if (i < -i_tol) here = {static_cast<int>(e), -i / (i_scale + i_tol), DiodeState::kOff};
        break;
      case DiodeState::kBreakdown:
        if (i > i_tol) here = {static_cast<int>(e), i / (i_scale + i_tol), DiodeState::kOff};
        break;
      case DiodeState::kOff:
        if (v > l.on_voltage + v_tol) {
          here = {static_cast<int>(e), (v - l.on_voltage) / (v_scale + v_tol), DiodeState::kOn};
        } else if (l.has_breakdown && v < -l.breakdown_voltage - v_tol) {
          here = {static_cast<int>(e), (-l.breakdown_voltage - v) / (v_scale + v_tol),
                  DiodeState::kBreakdown};
        }
        break;
    }
    if (here.diode < 0) continue;
    if (all) all->push_back(here);
    if (here.size > worst.size || worst.diode < 0) worst = here;
  }
  return worst;
}

bool SameNodeVoltages(const Solution& a, const Solution& b, const HandSearchOptions& options) {
  double scale = 0;
  for (double v : a.node_voltage) scale = std::max(scale, std::fabs(v));
  const double tol = options.voltage_tol + 1e-9 * scale;
  for (size_t n = 0; n < a.node_voltage.size(); ++n) {
    if (std::fabs(a.node_voltage[n] - b.node_voltage[n]) > tol) return false;
  }
  return true;
}

int Conducting(const std::vector<DiodeState>& states) {
  return static_cast<int>(std::count_if(states.begin(), states.end(),
                                        [](DiodeState s) { return s != DiodeState::kOff; }));
}

std::string StatesText(const Circuit& circuit, const std::vector<DiodeState>& states) {
  std::string out;
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    if (circuit.elements[e].kind != ElementKind::kDiode) continue;
    if (!out.empty()) out += ", ";
    out += fmt::format("{} {}", circuit.elements[e].name, ToString(states[e]));
  }
  return out;
}

// Collects consistent sets and decides the status at the end.
class Collector {
 public:
  Collector(const Circuit& circuit, const HandSearchOptions& options, HandResult* result)
      : circuit_(circuit), options_(options), result_(result) {}

  void Add(const std::vector<DiodeState>& states, const Solution& solution) {
    ++result_->consistent_sets;
    if (result_->solutions.size() < kMaxKeptSolutions) {
      result_->solutions.push_back({states, solution});
    }
  }

  void Finish(bool exhaustive) {
    HandResult& r = *result_;
    r.exhaustive = exhaustive;
    if (r.solutions.empty()) {
      r.status = HandStatus::kNoConsistent;
      if (r.detail.empty()) {
        r.detail =
            exhaustive ? fmt::format(
                             "none of the {} state sets is consistent ({} leave the "
                             "circuit undetermined)",
                             r.sets_tried, r.singular_sets)
            : r.work_limit_reached
                ? fmt::format(
                      "the iterative search stopped after {} state sets at its work "
                      "limit for a network of this size (docs/hand-models.md, "
                      "\"Limits\") and found no consistent set",
                      r.sets_tried)
                : fmt::format("the iterative search found no consistent state set in {} tries",
                              r.sets_tried);
      }
      return;
    }
    if (r.consistent_sets == 1) {
      r.status = exhaustive ? HandStatus::kUnique : HandStatus::kFound;
      return;
    }
    bool same = r.consistent_sets == static_cast<long long>(r.solutions.size());
    for (size_t k = 1; same && k < r.solutions.size(); ++k) {
      same = SameNodeVoltages(r.solutions.front().solution, r.solutions[k].solution, options_);
    }
    // The representative of equivalent sets: the one with the fewest conducting diodes.
    std::stable_sort(r.solutions.begin(), r.solutions.end(),
                     [](const HandSolution& a, const HandSolution& b) {
                       return Conducting(a.states) < Conducting(b.states);
                     });
    r.status = same ? HandStatus::kEquivalent : HandStatus::kAmbiguous;
    std::string sets;
    for (const HandSolution& s : r.solutions) {
      sets += fmt::format("{}[{}]", sets.empty() ? "" : "; ", StatesText(circuit_, s.states));
    }
    r.detail = fmt::format("{} state sets are consistent{}: {}", r.consistent_sets,
                           same ? ", all with the same node voltages" : "", sets);
  }

 private:
  const Circuit& circuit_;
  const HandSearchOptions& options_;
  HandResult* result_;
};

}  // namespace

const char* ToString(HandStatus status) {
  switch (status) {
    case HandStatus::kUnique:
      return "unique";
    case HandStatus::kFound:
      return "found, uniqueness not checked";
    case HandStatus::kEquivalent:
      return "several equivalent sets";
    case HandStatus::kAmbiguous:
      return "ambiguous";
    case HandStatus::kNoConsistent:
      return "no consistent set";
  }
  return "?";
}

namespace {

// The hand model's equations for one set of diode states: one row per node (KCL) and per
// branch current (voltage sources, conducting diodes as a line V = e + r*I).
void StampStateSet(const Circuit& circuit, const HandModel& model,
                   const std::vector<DiodeState>& states, const std::vector<int>& branch,
                   std::vector<Eigen::Triplet<double>>& entries, std::vector<double>& x) {
  auto add = [&entries](int r, int c, double v) { entries.emplace_back(r, c, v); };
  auto row = [](int node) { return node - 1; };  // -1 for gnd: no equation
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    const Element& el = circuit.elements[e];
    const int p = row(el.node_a), n = row(el.node_b);
    switch (el.kind) {
      case ElementKind::kResistor: {
        const double g = 1.0 / el.value;
        if (p >= 0) add(p, p, g);
        if (n >= 0) add(n, n, g);
        if (p >= 0 && n >= 0) {
          add(p, n, -g);
          add(n, p, -g);
        }
        break;
      }
      case ElementKind::kCurrentSource:
        // value flows out of node_a and into node_b
        if (p >= 0) x[static_cast<size_t>(p)] -= el.value;
        if (n >= 0) x[static_cast<size_t>(n)] += el.value;
        break;
      case ElementKind::kVoltageSource:
      case ElementKind::kDiode: {
        const int k = branch[e];
        if (k < 0) break;  // a blocking diode: open
        double emf = el.value, res = 0;
        if (el.kind == ElementKind::kDiode) {
          const DiodeLines& l = model.lines[e];
          const bool on = states[e] == DiodeState::kOn;
          emf = on ? l.on_voltage : -l.breakdown_voltage;
          res = on ? l.on_res : l.breakdown_res;
        }
        if (p >= 0) {
          add(p, k, 1);
          add(k, p, 1);
        }
        if (n >= 0) {
          add(n, k, -1);
          add(k, n, -1);
        }
        add(k, k, -res);  // v(a) - v(b) - r I = e
        x[static_cast<size_t>(k)] = emf;
        break;
      }
    }
  }
}

// x = A^-1 x for the collected entries; false where the set leaves the circuit
// undetermined or the solve fails.
bool SolveEntries(int unknowns, std::vector<Eigen::Triplet<double>>& entries,
                  std::vector<double>& x) {
  auto add = [&entries](int r, int c, double v) { entries.emplace_back(r, c, v); };
  // Every diagonal entry present (zero where nothing stamps it), so that a structurally
  // empty row shows as a zero pivot rather than an invalid pattern.
  for (int i = 0; i < unknowns; ++i) add(i, i, 0.0);
  Eigen::SparseMatrix<double, Eigen::ColMajor, int> a(unknowns, unknowns);
  a.setFromTriplets(entries.begin(), entries.end());
  a.makeCompressed();
  internal::KluSolver lu;
  const auto n_cols = static_cast<size_t>(unknowns);
  const auto nnz = static_cast<size_t>(a.nonZeros());
  if (lu.Analyze(unknowns, {a.outerIndexPtr(), n_cols + 1}, {a.innerIndexPtr(), nnz}) !=
          internal::LinearStatus::kOk ||
      lu.Factor({a.valuePtr(), nnz}) != internal::LinearStatus::kOk) {
    return false;
  }
  // The rank test of a full-pivoting LU: a pivot below n * epsilon of the largest
  // means the set leaves the circuit undetermined.
  if (!(lu.rcond() > std::numeric_limits<double>::epsilon() * unknowns)) return false;
  if (lu.Solve(x) != internal::LinearStatus::kOk) return false;
  for (double v : x) {
    if (!std::isfinite(v)) return false;
  }
  return true;
}

// The solution of the set's equations x as node voltages and element currents.
void FillStateSet(const Circuit& circuit, const HandModel& model,
                  const std::vector<DiodeState>& states, const std::vector<int>& branch,
                  const std::vector<double>& x, int nodes, Solution* out) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  Solution& s = *out;
  s.node_voltage.assign(circuit.nodes.size(), 0.0);
  for (int i = 0; i < nodes; ++i)
    s.node_voltage[static_cast<size_t>(i) + 1] = x[static_cast<size_t>(i)];
  const size_t count = circuit.elements.size();
  s.element_voltage.assign(count, nan);
  s.element_current.assign(count, nan);
  s.junction_voltage.assign(count, nan);
  s.small_signal_res.assign(count, nan);
  for (size_t e = 0; e < count; ++e) {
    const Element& el = circuit.elements[e];
    const double v = s.node_voltage[static_cast<size_t>(el.node_a)] -
                     s.node_voltage[static_cast<size_t>(el.node_b)];
    s.element_voltage[e] = v;
    switch (el.kind) {
      case ElementKind::kResistor:
        s.element_current[e] = v / el.value;
        break;
      case ElementKind::kCurrentSource:
        s.element_current[e] = el.value;
        break;
      case ElementKind::kVoltageSource:
        s.element_current[e] = x[static_cast<size_t>(branch[e])];
        break;
      case ElementKind::kDiode:
        s.element_current[e] = branch[e] >= 0 ? x[static_cast<size_t>(branch[e])] : 0.0;
        s.small_signal_res[e] = states[e] == DiodeState::kOn ? model.lines[e].on_res
                                : states[e] == DiodeState::kBreakdown
                                    ? model.lines[e].breakdown_res
                                    : std::numeric_limits<double>::infinity();
        break;
    }
  }
}

}  // namespace

bool SolveStateSet(const Circuit& circuit, const HandModel& model,
                   const std::vector<DiodeState>& states, Solution* out) {
  KNEE_CHECK(states.size() == circuit.elements.size());
  KNEE_CHECK(model.lines.size() == circuit.elements.size());
  const int nodes = static_cast<int>(circuit.nodes.size()) - 1;  // gnd is not an unknown
  // Branch-current unknowns: voltage sources, and diodes that conduct (a line
  // V = e + r*I in series, current from node_a to node_b).
  std::vector<int> branch(circuit.elements.size(), -1);
  int unknowns = nodes;
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    const Element& el = circuit.elements[e];
    if (el.kind == ElementKind::kVoltageSource ||
        (el.kind == ElementKind::kDiode && states[e] != DiodeState::kOff)) {
      branch[e] = unknowns++;
    }
  }
  std::vector<Eigen::Triplet<double>> entries;                // duplicates are summed
  std::vector<double> x(static_cast<size_t>(unknowns), 0.0);  // the right side, then the solution
  StampStateSet(circuit, model, states, branch, entries, x);
  if (unknowns > 0 && !SolveEntries(unknowns, entries, x)) return false;
  FillStateSet(circuit, model, states, branch, x, nodes, out);
  return true;
}

namespace {

// Every set of diode states, for a circuit with few enough of them.
void EnumerateSets(const Circuit& circuit, const HandModel& model, const HandSearchOptions& options,
                   const std::vector<int>& diodes, long long total, Collector& collector,
                   HandResult& result) {
  std::vector<DiodeState> states(circuit.elements.size(), DiodeState::kOff);
  Solution solution;
  // Every set, counted in mixed radix: digit 0 off, 1 on, 2 breakdown.
  for (long long code = 0; code < total; ++code) {
    long long rest = code;
    for (int e : diodes) {
      const long long radix = model.lines[static_cast<size_t>(e)].has_breakdown ? 3 : 2;
      states[static_cast<size_t>(e)] = static_cast<DiodeState>(rest % radix);
      rest /= radix;
    }
    ++result.sets_tried;
    if (!SolveStateSet(circuit, model, states, &solution)) {
      ++result.singular_sets;
      continue;
    }
    if (Check(circuit, model, states, solution, options, nullptr).diode < 0) {
      collector.Add(states, solution);
    }
  }
}

void SearchSets(const Circuit& circuit, const HandModel& model, const HandSearchOptions& options,
                const std::vector<int>& diodes, long long size, Collector& collector,
                HandResult& result) {
  std::vector<DiodeState> states(circuit.elements.size(), DiodeState::kOff);
  Solution solution;
  // Bounded iterative search: start from the given states, move every violating diode
  // to the state its violation points to; on a repeat move only the worst one; on a
  // singular set flip single diodes not yet visited. Never revisits a set.
  if (options.start.size() == circuit.elements.size()) {
    for (int e : diodes) states[static_cast<size_t>(e)] = options.start[static_cast<size_t>(e)];
  }
  std::set<std::vector<DiodeState>> visited;
  auto next_unvisited_flip = [&](const std::vector<DiodeState>& from, std::vector<DiodeState>* to) {
    for (int e : diodes) {
      for (DiodeState s : {DiodeState::kOn, DiodeState::kOff, DiodeState::kBreakdown}) {
        if (s == from[static_cast<size_t>(e)]) continue;
        if (s == DiodeState::kBreakdown && !model.lines[static_cast<size_t>(e)].has_breakdown) {
          continue;
        }
        *to = from;
        (*to)[static_cast<size_t>(e)] = s;
        if (!visited.count(*to)) return true;
      }
    }
    return false;
  };
  for (int iteration = 0; iteration < options.max_iterations; ++iteration) {
    if (result.sets_tried + 1 > options.max_work / std::max(size, 1LL)) {
      result.work_limit_reached = true;
      break;
    }
    visited.insert(states);
    ++result.sets_tried;
    std::vector<DiodeState> next;
    if (!SolveStateSet(circuit, model, states, &solution)) {
      ++result.singular_sets;
      if (!next_unvisited_flip(states, &next)) break;
      states = next;
      continue;
    }
    std::vector<Violation> all;
    const Violation worst = Check(circuit, model, states, solution, options, &all);
    if (worst.diode < 0) {
      collector.Add(states, solution);
      break;
    }
    next = states;
    for (const Violation& v : all) next[static_cast<size_t>(v.diode)] = v.fix;
    if (visited.count(next)) {
      next = states;
      next[static_cast<size_t>(worst.diode)] = worst.fix;
      if (visited.count(next) && !next_unvisited_flip(states, &next)) break;
    }
    states = next;
  }
}

}  // namespace

HandResult SolveHand(const Circuit& circuit, const HandModel& model,
                     const HandSearchOptions& options) {
  HandResult result;
  Collector collector(circuit, options, &result);
  std::vector<int> diodes;
  long long total = 1;
  bool too_many = false;
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    if (circuit.elements[e].kind != ElementKind::kDiode) continue;
    diodes.push_back(static_cast<int>(e));
    total *= model.lines[e].has_breakdown ? 3 : 2;
    if (total > options.max_enumerated_sets) too_many = true;
    if (too_many) total = options.max_enumerated_sets + 1;  // no overflow
  }
  // The cost of one set, in the units of options.max_work.
  const auto size = static_cast<long long>(circuit.nodes.size() + circuit.elements.size());
  if (!too_many && total > options.max_work / std::max(size, 1LL)) too_many = true;
  if (!too_many) {
    EnumerateSets(circuit, model, options, diodes, total, collector, result);
    collector.Finish(true);
    return result;
  }
  SearchSets(circuit, model, options, diodes, size, collector, result);
  collector.Finish(false);
  return result;
}

}  // namespace knee
