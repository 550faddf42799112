// The potential method: Newton directions of the MNA system, a line search on the
// network's co-content, and the structural test for networks without a solution.
// The mathematics and its sources are in docs/solver.md, "The potential method".
#include "potential.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <queue>

#include "knee/diode_law.h"

namespace knee::internal {
namespace {

double MaxAbs(std::span<const double> v, size_t count) {
  double m = 0.0;
  for (size_t i = 0; i < count; ++i) m = std::max(m, std::fabs(v[i]));
  return m;
}

bool Finite(double v) { return std::isfinite(v); }

bool AllFinite(std::span<const double> v) {
  return std::all_of(v.begin(), v.end(), [](double d) { return std::isfinite(d); });
}

// Union-find over circuit nodes.
class Groups {
 public:
  explicit Groups(size_t n) : parent_(n) { std::iota(parent_.begin(), parent_.end(), 0); }
  int Find(int i) {
    while (parent_[static_cast<size_t>(i)] != i) {
      int& p = parent_[static_cast<size_t>(i)];
      p = parent_[static_cast<size_t>(p)];
      i = p;
    }
    return i;
  }
  void Join(int a, int b) {
    a = Find(a);
    b = Find(b);
    if (a != b) parent_[static_cast<size_t>(std::max(a, b))] = std::min(a, b);
  }

 private:
  std::vector<int> parent_;
};

// Maximum flow (shortest augmenting paths, J. Edmonds and R. M. Karp, J. ACM 19(2),
// 1972) on a small graph with real capacities; afterwards, the nodes reachable from the
// source in the residual graph form the source side of a minimum cut.
class FlowGraph {
 public:
  explicit FlowGraph(int n) : adjacent_(static_cast<size_t>(n)) {}
  void AddEdge(int from, int to, double capacity) {
    adjacent_[static_cast<size_t>(from)].push_back(static_cast<int>(edges_.size()));
    edges_.push_back({to, capacity});
    adjacent_[static_cast<size_t>(to)].push_back(static_cast<int>(edges_.size()));
    edges_.push_back({from, 0.0});
  }
  double MaxFlow(int source, int sink) {
    double total = 0.0;
    const size_t n = adjacent_.size();
    while (true) {
      std::vector<int> via(n, -1);  // edge used to reach each node
      std::vector<char> seen(n, 0);
      std::queue<int> queue;
      queue.push(source);
      seen[static_cast<size_t>(source)] = 1;
      while (!queue.empty() && !seen[static_cast<size_t>(sink)]) {
        const int u = queue.front();
        queue.pop();
        for (int e : adjacent_[static_cast<size_t>(u)]) {
          const Edge& edge = edges_[static_cast<size_t>(e)];
          if (edge.capacity > 0.0 && !seen[static_cast<size_t>(edge.to)]) {
            seen[static_cast<size_t>(edge.to)] = 1;
            via[static_cast<size_t>(edge.to)] = e;
            queue.push(edge.to);
          }
        }
      }
      if (!seen[static_cast<size_t>(sink)]) return total;
      double push = std::numeric_limits<double>::infinity();
      for (int v = sink; v != source;) {
        const int e = via[static_cast<size_t>(v)];
        push = std::min(push, edges_[static_cast<size_t>(e)].capacity);
        v = edges_[static_cast<size_t>(e ^ 1)].to;
      }
      for (int v = sink; v != source;) {
        const int e = via[static_cast<size_t>(v)];
        edges_[static_cast<size_t>(e)].capacity -= push;
        edges_[static_cast<size_t>(e ^ 1)].capacity += push;
        v = edges_[static_cast<size_t>(e ^ 1)].to;
      }
      total += push;
    }
  }
  std::vector<char> SourceSide(int source) const {
    std::vector<char> seen(adjacent_.size(), 0);
    std::queue<int> queue;
    queue.push(source);
    seen[static_cast<size_t>(source)] = 1;
    while (!queue.empty()) {
      const int u = queue.front();
      queue.pop();
      for (int e : adjacent_[static_cast<size_t>(u)]) {
        const Edge& edge = edges_[static_cast<size_t>(e)];
        if (edge.capacity > 0.0 && !seen[static_cast<size_t>(edge.to)]) {
          seen[static_cast<size_t>(edge.to)] = 1;
          queue.push(edge.to);
        }
      }
    }
    return seen;
  }

 private:
  struct Edge {
    int to;
    double capacity;
  };
  std::vector<std::vector<int>> adjacent_;
  std::vector<Edge> edges_;
};

struct DirectedDiode {
  int element;
  int anode_group;
  int cathode_group;
  double is;  // A, the most reverse current it can carry
};

// Maximum-weight closure (Picard 1976): the set S of groups, without gnd's group, closed
// under `edges` (from in S implies to in S), that maximises sum(profit). Returns the
// membership per group and the value.
std::pair<std::vector<char>, double> MaxClosure(const std::vector<double>& profit,
                                                const std::vector<std::pair<int, int>>& edges,
                                                int ground) {
  const int n = static_cast<int>(profit.size());
  const int source = n;
  const int sink = n + 1;
  FlowGraph graph(n + 2);
  const double infinite = std::numeric_limits<double>::infinity();
  double positive = 0.0;
  for (int g = 0; g < n; ++g) {
    const double p = profit[static_cast<size_t>(g)];
    if (p > 0.0) {
      graph.AddEdge(source, g, p);
      positive += p;
    } else if (p < 0.0) {
      graph.AddEdge(g, sink, -p);
    }
  }
  for (const auto& [from, to] : edges) graph.AddEdge(from, to, infinite);
  graph.AddEdge(ground, sink, infinite);
  const double cut = graph.MaxFlow(source, sink);
  std::vector<char> side = graph.SourceSide(source);
  side.resize(static_cast<size_t>(n));
  return {side, positive - cut};
}

std::string NodeList(const Circuit& c, Groups& groups, const std::vector<char>& in_set) {
  std::vector<std::string> names;
  for (size_t node = 1; node < c.nodes.size(); ++node) {
    if (in_set[static_cast<size_t>(groups.Find(static_cast<int>(node)))]) {
      names.push_back(c.nodes[node]);
    }
  }
  constexpr size_t kShown = 8;
  std::string out;
  for (size_t i = 0; i < names.size() && i < kShown; ++i) {
    out += (i == 0 ? "'" : ", '") + names[i] + "'";
  }
  if (names.size() > kShown) out += fmt::format(" and {} more", names.size() - kShown);
  return out;
}

std::string NameList(const std::vector<std::string>& names) {
  std::string out;
  for (size_t i = 0; i < names.size(); ++i) {
    if (i > 0) out += (i + 1 == names.size()) ? " and " : ", ";
    out += "'" + names[i] + "'";
  }
  return out;
}

}  // namespace

std::optional<std::string> NonMonotoneReason(const Circuit& c) {
  for (const Element& e : c.elements) {
    switch (e.kind) {
      case ElementKind::kResistor:
        if (!(Finite(e.value) && e.value > 0.0)) {
          return fmt::format("resistor '{}' has {:g} Ohm, not a finite value > 0", e.name, e.value);
        }
        break;
      case ElementKind::kVoltageSource:
      case ElementKind::kCurrentSource:
        if (!Finite(e.value)) return fmt::format("source '{}' has no finite value", e.name);
        break;
      case ElementKind::kDiode: {
        if (e.part < 0 || e.part >= static_cast<int>(c.parts.size())) {
          return fmt::format("diode '{}' has no part", e.name);
        }
        const DiodeConstants d = ComputeDiodeConstants(c.parts[static_cast<size_t>(e.part)].model,
                                                       e.area, c.DeviceTemp(e));
        // area*Is(T) may be below the smallest double (a cold junction): its logarithm
        // decides, since the law is evaluated from it.
        const bool forward_ok = Finite(d.is) && Finite(d.log_is) && Finite(d.n_vt) && d.n_vt > 0.0;
        const bool series_ok = Finite(d.rs) && d.rs >= 0.0;
        const bool breakdown_ok =
            !d.has_breakdown ||
            (Finite(d.ibr) && d.ibr > 0.0 && Finite(d.nbr_vt) && d.nbr_vt > 0.0 && Finite(d.vbr));
        if (!(forward_ok && series_ok && breakdown_ok)) {
          return fmt::format(
              "diode '{}' has a law that is not strictly increasing at {:g} C (Is {:g} A, "
              "n*Vt {:g} V, series {:g} Ohm)",
              e.name, c.DeviceTemp(e), d.is, d.n_vt, d.rs);
        }
        break;
      }
    }
  }
  return std::nullopt;
}

std::optional<std::string> FindUnboundedCut(const Circuit& c) {
  const size_t node_count = c.nodes.size();
  Groups groups(node_count);
  // Directions that change a resistor's, a voltage source's or a breakdown-capable
  // diode's voltage raise the potential without bound (quadratically or exponentially):
  // their ends move together. A diode's series resistance ties its anode to its junction.
  std::vector<DirectedDiode> diodes;
  for (int i = 0; i < static_cast<int>(c.elements.size()); ++i) {
    const Element& e = c.elements[static_cast<size_t>(i)];
    if (e.kind == ElementKind::kResistor || e.kind == ElementKind::kVoltageSource) {
      groups.Join(e.node_a, e.node_b);
    } else if (e.kind == ElementKind::kDiode) {
      const DiodeConstants d = ComputeDiodeConstants(c.parts[static_cast<size_t>(e.part)].model,
                                                     e.area, c.DeviceTemp(e));
      if (d.has_breakdown) {
        groups.Join(e.node_a, e.node_b);
      } else {
        diodes.push_back({i, e.node_a, e.node_b, d.is});
      }
    }
  }
  const int ground = groups.Find(kGroundNode);
  // Slope of the potential along the indicator of a set S of groups, per group:
  // w(g) = sum over current sources of I*([a in g] - [b in g]) + sum over diodes of
  // Is*([cathode in g] - [anode in g]).
  std::vector<double> weight(node_count, 0.0);
  double scale = 0.0;
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kCurrentSource) continue;
    weight[static_cast<size_t>(groups.Find(e.node_a))] += e.value;
    weight[static_cast<size_t>(groups.Find(e.node_b))] -= e.value;
    scale += std::fabs(e.value);
  }
  std::vector<std::pair<int, int>> forward_edges, reverse_edges;
  for (DirectedDiode& d : diodes) {
    d.anode_group = groups.Find(d.anode_group);
    d.cathode_group = groups.Find(d.cathode_group);
    if (d.anode_group == d.cathode_group) continue;
    weight[static_cast<size_t>(d.cathode_group)] += d.is;
    weight[static_cast<size_t>(d.anode_group)] -= d.is;
    scale += d.is;
    forward_edges.emplace_back(d.anode_group, d.cathode_group);
    reverse_edges.emplace_back(d.cathode_group, d.anode_group);
  }
  if (scale == 0.0) return std::nullopt;
  // Raising the voltage of S (closed under anode -> cathode, so no diode is forward
  // biased) changes the potential at the rate sum_S w; lowering a set T (closed under
  // cathode -> anode) at the rate -sum_T w. Every direction is a positive combination of
  // such indicators (its level sets), so these two closures decide boundedness.
  std::vector<double> negated(weight.size());
  for (size_t g = 0; g < weight.size(); ++g) negated[g] = -weight[g];
  const double tolerance = 64 * std::numeric_limits<double>::epsilon() * scale;
  for (int raise = 1; raise >= 0; --raise) {
    const auto [in_set, value] =
        MaxClosure(raise ? negated : weight, raise ? forward_edges : reverse_edges, ground);
    if (!(value > tolerance)) continue;
    // Name the current sources that cross the set and the diodes that leave it in reverse.
    std::vector<std::string> sources, blocking;
    double pushed = 0.0;
    double capacity = 0.0;
    for (const Element& e : c.elements) {
      if (e.kind != ElementKind::kCurrentSource) continue;
      const bool a_in = in_set[static_cast<size_t>(groups.Find(e.node_a))] != 0;
      const bool b_in = in_set[static_cast<size_t>(groups.Find(e.node_b))] != 0;
      if (a_in == b_in) continue;
      sources.push_back(e.name);
      // Current I flows from a to b through the source: into the set when b is inside.
      pushed += (b_in ? e.value : -e.value) * (raise ? 1.0 : -1.0);
    }
    for (const DirectedDiode& d : diodes) {
      const bool a_in = in_set[static_cast<size_t>(d.anode_group)] != 0;
      const bool k_in = in_set[static_cast<size_t>(d.cathode_group)] != 0;
      if (a_in == k_in) continue;
      blocking.push_back(c.elements[static_cast<size_t>(d.element)].name);
      capacity += d.is;
    }
    const std::string nodes = NodeList(c, groups, in_set);
    std::string message = fmt::format(
        "no DC solution: current source{} {} {} a net {:.4g} A {} node{} {}",
        sources.size() == 1 ? "" : "s", NameList(sources),
        sources.size() == 1 ? (raise ? "pushes" : "pulls") : (raise ? "push" : "pull"), pushed,
        raise ? "into" : "out of", nodes.find(',') == std::string::npos ? "" : "s", nodes);
    if (blocking.empty()) {
      message += nodes.find(',') == std::string::npos ? ", which has no other path"
                                                      : ", which have no other path";
    } else {
      message += fmt::format(
          ", but the only other way {} is through diode{} {} without breakdown, in reverse, "
          "which carr{} at most {:.4g} A",
          raise ? "out" : "in", blocking.size() == 1 ? "" : "s", NameList(blocking),
          blocking.size() == 1 ? "ies" : "y", capacity);
    }
    message += " (the network's potential is unbounded below)";
    return message;
  }
  return std::nullopt;
}

double StiffJunctionConductance(const Circuit& c) {
  double largest = 0.0;
  for (const Element& e : c.elements) {
    if (e.kind == ElementKind::kResistor && e.value > 0.0) {
      largest = std::max(largest, 1.0 / e.value);
    } else if (e.kind == ElementKind::kDiode && e.part >= 0) {
      const double rs = c.parts[static_cast<size_t>(e.part)].model.series_res / e.area;
      if (rs > 0.0) largest = std::max(largest, 1.0 / rs);
    }
  }
  return kStiffFactor * (largest > 0.0 && std::isfinite(largest) ? largest : 1.0);
}

PotentialSolver::PotentialSolver(MnaSystem* mna, KluSolver* klu, const SolverOptions& options,
                                 int size)
    : mna_(mna), klu_(klu), options_(options), size_(static_cast<size_t>(size)) {}

// The working vectors are sized on the first Run, not at construction: a classic solve
// (the default) never runs this solver, and a million unknowns make them 32 MB.
void PotentialSolver::SizeVectors() {
  if (dx_.size() == size_) return;
  dx_.assign(size_, 0.0);
  step_.assign(size_, 0.0);
  base_.assign(size_, 0.0);
  last_step_.assign(size_, 0.0);
  noise_.assign(size_, 0.0);
  faint_.assign(size_, 0);
  branch_dv_.assign(size_ - static_cast<size_t>(mna_->kcl_rows()), 0.0);
}

// d/dt of the potential at x along the node-voltage part dv of dx_: the gradient of the
// potential is the devices' KCL residual without the voltage sources' currents k, so
// slope = sum_r F_r dv_r - sum_k x_k (A^T dv)_k, with A^T dv the change of every source's
// v(P) - v(N) along dv (zero on the feasible set, up to round-off).
double PotentialSolver::Slope(std::span<const double> x) const {
  const auto f = mna_->residual();
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  double slope = 0.0;
  for (size_t r = 0; r < kcl; ++r) slope += f[r] * dx_[r];
  for (size_t k = 0; k < branch_dv_.size(); ++k) slope -= x[kcl + k] * branch_dv_[k];
  return slope;
}

double PotentialSolver::SlopeRoundOff() const {
  double bound = 0.0;
  for (int r = 0; r < mna_->kcl_rows(); ++r) {
    bound += mna_->RoundOffAllowance(r) * std::fabs(dx_[static_cast<size_t>(r)]);
  }
  return bound;
}

// The source equations hold at the last assembly (within their residual bound).
bool PotentialSolver::Feasible() const {
  const auto f = mna_->residual();
  for (int r = mna_->kcl_rows(); r < mna_->size(); ++r) {
    if (!(std::fabs(f[static_cast<size_t>(r)]) <=
          options_.abs_voltage_tol + mna_->RoundOffAllowance(r))) {
      return false;
    }
  }
  return true;
}

namespace {
// The share of the Newton direction's multiplier part (the voltage sources' currents)
// that a step of length t takes: all of it for any real step, since the multipliers do
// not enter the potential and the direction gives them for the whole step; t itself
// below kShortStep, where the direction came from a nearly singular Hessian and its
// multiplier part with it (torture seed 45349: 3e74 A taken whole with t = 1e-207 left
// every later trial at that residual, 200 steps with no move); none for t = 0.
double MultiplierFraction(double t) { return t >= kShortStep ? 1.0 : t; }
}  // namespace

// x = base + t*dv for the node voltages and base + MultiplierFraction(t)*dk for the
// source currents, then one assembly pass that gives the Jacobian, the residual and the
// potential.
PotentialSolver::Trial PotentialSolver::Evaluate(std::span<const double> base, double t,
                                                 std::span<double> x) {
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  bool inside = true;
  for (size_t i = 0; i < x.size(); ++i) {
    x[i] = base[i] + (i < kcl ? t : MultiplierFraction(t)) * step_[i];
    if (i < kcl && !(std::fabs(x[i]) <= voltage_bound_)) inside = false;
  }
  AssemblyAids aids;
  aids.want_potential = true;
  aids.junction_floor = floor_;
  const AssemblyOutcome out = mna_->Assemble(x, aids);
  ++evaluations_;
  Trial trial;
  trial.finite = inside && out.finite && std::isfinite(out.potential);
  trial.potential = out.potential;
  trial.potential_magnitude = out.potential_magnitude;
  trial.max_log_current = out.max_log_current;
  if (trial.finite) {
    trial.slope = Slope(x);
    const ToleranceCheck residual = CheckResidual(*mna_, options_);
    trial.residual_ratio = residual.ratio();
    trial.residual_merit = ResidualMerit(*mna_, options_);
  }
  trial.finite = trial.finite && std::isfinite(trial.slope);
  return trial;
}

// Off the set where the sources hold (a cold start, or a warm start whose sources
// changed): one step onto it, taken whole (the source equations are linear, so the full
// step satisfies them; from then on every Newton step keeps them). Among the steps that
// do, this one is the smallest in the metric of a network in which every junction is a
// stiff conductance and every resistor keeps its own: the sources' voltages land on the
// resistors and the junctions keep their voltages, instead of a junction taking a whole
// source voltage and starting deep in its exponential. On return dx_ holds the step.
bool PotentialSolver::FeasibilityStep(std::span<double> x, NewtonOutcome* outcome) {
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  const auto f = mna_->residual();
  std::copy(f.begin(), f.end(), step_.begin());  // the assemblies below overwrite f
  // A stiffness far above every resistor can round the resistors away where junctions
  // join two nodes that only high resistances hold (a 1e9 S junction beside 1e-8 S): the
  // factorisation is then singular, and the step is tried with softer junctions. Any
  // positive stiffness gives a step onto the constraints; the stiffer, the closer it
  // keeps the junctions' voltages.
  AssemblyOutcome assembled;
  LinearStatus status = LinearStatus::kSingular;
  exact_factors_ = false;
  for (double g = stiff_; status == LinearStatus::kSingular && g >= stiff_ * kSoftestFeasibility;
       g *= 1e-3) {
    for (size_t i = 0; i < dx_.size(); ++i) dx_[i] = i < kcl ? 0.0 : -step_[i];
    AssemblyAids stiff;
    stiff.stiff_junction = g;
    stiff.gmin = g * kFeasibilityShunt;
    assembled = mna_->Assemble(x, stiff);
    ++evaluations_;
    status = assembled.finite ? klu_->Factor(mna_->values()) : LinearStatus::kFatal;
    if (status == LinearStatus::kOk) status = klu_->Solve(dx_);
  }
  if (status == LinearStatus::kOk) {
    MapStep();
    return true;
  }
  outcome->exit = status == LinearStatus::kSingular ? NewtonExit::kSingular : NewtonExit::kFatal;
  outcome->detail = assembled.finite ? klu_->message() : "the starting point is not finite";
  return false;
}

bool PotentialSolver::SolveStep(NewtonOutcome* outcome) {
  // Fresh pivots at every step: conductances across a network span 1e-25 S to 1e15 S and
  // move by decades per step, so pivots chosen at another point can leave the direction
  // inaccurate beyond what the line search can resolve (KLU's pivot-growth test does not
  // catch all of it). The networks are small; a full factorisation costs little more.
  {
    const auto f = mna_->residual();
    for (size_t i = 0; i < dx_.size(); ++i) step_[i] = -f[i];  // -g, kept for the retries
  }
  LinearStatus status = LinearStatus::kSingular;
  exact_factors_ = false;
  if (shift_ == 0.0) {
    status = klu_->Factor(mna_->values());
    exact_factors_ = !floor_ && status == LinearStatus::kOk;
    if (status == LinearStatus::kOk) {
      std::copy(step_.begin(), step_.end(), dx_.begin());
      status = klu_->Solve(dx_);
      // Pivots KLU takes for nonzero (1e-300 S) can still overflow the direction: that
      // matrix is singular for this purpose (torture seed 18568 lost every other step
      // to an infinite direction and a failed line search).
      if (status == LinearStatus::kOk && !AllFinite(dx_)) status = LinearStatus::kSingular;
    }
  }
  // A Hessian that is singular in floating point (junction conductances that underflow,
  // e.g. a node held only by reverse-biased junctions), or one whose direction gave no
  // usable step (shift_ > 0, see Run), is modified by adding mu to its diagonal:
  // (H + mu I) d = -g is still a descent direction, turning towards steepest descent as
  // mu grows, and the line search and the convergence tests stay those of the exact
  // potential (Newton's method with Hessian modification, Nocedal and Wright ch. 3.4,
  // recalled from memory). mu grows by 1e3 per try while the matrix stays singular.
  if (status == LinearStatus::kSingular && x_ != nullptr) {
    for (double mu = std::max(shift_, kFirstShift);
         mu <= kLastShift && status == LinearStatus::kSingular; mu *= 1e3) {
      AssemblyAids modified;
      modified.gmin = mu;
      if (!mna_->Assemble(*x_, modified).finite) break;
      ++evaluations_;
      status = klu_->Factor(mna_->values());
      if (status != LinearStatus::kOk) continue;
      std::copy(step_.begin(), step_.end(), dx_.begin());
      status = klu_->Solve(dx_);
      if (status == LinearStatus::kOk && !AllFinite(dx_)) status = LinearStatus::kSingular;
    }
    AssemblyAids exact;
    exact.want_potential = true;
    exact.junction_floor = floor_;
    mna_->Assemble(*x_, exact);  // back to the exact model's residual at x
    ++evaluations_;
  }
  if (status == LinearStatus::kOk) {
    MapStep();
    return true;
  }
  outcome->exit = status == LinearStatus::kSingular ? NewtonExit::kSingular : NewtonExit::kFatal;
  outcome->detail = klu_->message();
  return false;
}

NewtonOutcome PotentialSolver::Run(std::span<double> x, std::vector<NewtonStepRecord>* trace) {
  SizeVectors();
  NewtonOutcome outcome;
  evaluations_ = 0;
  floor_ = false;
  shift_ = 0.0;
  x_ = &x;  // for SolveStep's Hessian modification; only used during this call
  mna_->BeginRun(x);
  AssemblyAids aids;
  aids.want_potential = true;
  aids.junction_floor = floor_;
  const AssemblyOutcome start = mna_->Assemble(x, aids);
  ++evaluations_;
  if (!start.finite || !std::isfinite(start.potential)) {
    outcome.exit = NewtonExit::kNonFinite;
    outcome.detail =
        fmt::format("the starting point gives element '{}' a non-finite value",
                    start.bad_element >= 0 ? mna_->ElementName(start.bad_element) : "?");
    return outcome;
  }
  double potential = start.potential;
  double potential_magnitude = start.potential_magnitude;
  double base_log_current = start.max_log_current;  // largest junction term at x, ln A
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  ToleranceCheck update;
  update.index = 0;
  update.value = 1.0;     // no update yet: not settled
  bool creeping = false;  // the last full step repeated the one before (kCreepRepeat)
  std::fill(last_step_.begin(), last_step_.end(), 0.0);
  for (int step = 1; step <= options_.max_newton_steps; ++step) {
    outcome.steps = step;
    const ToleranceCheck residual = CheckResidual(*mna_, options_);
    if (step > 1 && update.passed() && residual.passed()) {
      outcome.exit = NewtonExit::kConverged;
      outcome.detail = fmt::format(
          "potential method converged in {} steps ({} evaluations): worst |dx| at '{}' = "
          "{:.3g} <= {:.3g}, worst residual at '{}' = {:.3g} <= {:.3g}",
          step - 1, evaluations_, mna_->UnknownName(update.index), update.value, update.bound,
          mna_->UnknownName(residual.index), residual.value, residual.bound);
      Polish(x, update.ratio());
      return outcome;
    }
    const double max_residual = MaxAbs(mna_->residual(), kcl);
    // The step onto the sources' constraints is taken once, at the start; afterwards the
    // Newton system's source rows correct any drift of round-off size within each step.
    const bool feasible = step > 1 || Feasible();
    if (!feasible) {
      std::copy(x.begin(), x.end(), base_.begin());
      if (!FeasibilityStep(x, &outcome)) {
        outcome.detail = fmt::format("step {}: {}", step, outcome.detail);
        return outcome;
      }
    } else if (!SolveStep(&outcome)) {
      outcome.detail = fmt::format("step {}: {}", step, outcome.detail);
      return outcome;
    }
    // A^T dv from the source rows of the Jacobian (their entries are the constant +-1 of
    // the source equations).
    std::fill(branch_dv_.begin(), branch_dv_.end(), 0.0);
    {
      const auto col_ptr = mna_->col_ptr();
      const auto rows = mna_->row_index();
      const auto values = mna_->values();
      for (size_t col = 0; col < kcl; ++col) {
        for (int p = col_ptr[col]; p < col_ptr[col + 1]; ++p) {
          const auto row = static_cast<size_t>(rows[static_cast<size_t>(p)]);
          if (row >= kcl) branch_dv_[row - kcl] += values[static_cast<size_t>(p)] * dx_[col];
        }
      }
    }
    std::copy(x.begin(), x.end(), base_.begin());
    const double slope0 = Slope(base_);
    const double slope_roundoff = SlopeRoundOff();
    const double before = potential;
    const double before_magnitude = potential_magnitude;
    const auto roundoff = [&](const Trial& tr) {
      return MnaSystem::kRoundOffFactor * (tr.potential_magnitude + before_magnitude);
    };
    double t = 1.0;
    int trials = 0;
    Trial accepted;
    bool ok = false;
    const char* phase = "potential";
    if (!feasible) {
      phase = "potential (sources)";
      accepted = Evaluate(base_, 1.0, x);
      trials = 1;
      ok = accepted.finite;
    } else if (!(slope0 < -slope_roundoff)) {
      // The slope along the Newton direction is below its own round-off: the point is
      // stationary as far as floating point can tell. The full step is taken when it
      // does not raise the potential by more than the potential's round-off or when it
      // lowers the worst residual-to-tolerance ratio (the potential, a sum of terms up
      // to kW, cannot resolve the last nanoamperes of a node), else the longest of a
      // few halvings that does; none: the point stays (a zero step), and the convergence
      // tests decide.
      const double before_ratio = residual.ratio();
      const double merit0 = ResidualMerit(*mna_, options_);
      for (trials = 1; trials <= kMaxStationaryHalvings; ++trials, t *= 0.5) {
        accepted = Evaluate(base_, t, x);
        if (accepted.finite &&
            (accepted.potential - before <= roundoff(accepted) ||
             accepted.residual_ratio < before_ratio || accepted.residual_merit < merit0)) {
          break;
        }
      }
      if (trials > kMaxStationaryHalvings) {
        t = 0.0;
        accepted = Evaluate(base_, 0.0, x);
        ++trials;
      }
      ok = accepted.finite;
    } else {
      const double merit0 = ResidualMerit(*mna_, options_);
      const double curvature = creeping ? kCreepCurvature : kCurvatureFraction;
      ok = LineSearch(slope0, slope_roundoff, before, before_magnitude, merit0,
                      std::max(kLogCurrentCap, base_log_current), curvature, x, &t, &trials,
                      &accepted);
      if (!ok) {
        int more = 0;
        ok =
            LineSearch(slope0, slope_roundoff, before, before_magnitude, merit0,
                       std::numeric_limits<double>::infinity(), curvature, x, &t, &more, &accepted);
        trials += more;
      }
    }
    if (!ok && (!floor_ || shift_ < kLastShift)) {
      // No step along this direction: once more from the same point with the Hessian
      // modified, first by the junction floor, then by a growing diagonal shift (x holds
      // the last trial, so the point is restored first).
      std::copy(base_.begin(), base_.end(), x.begin());
      if (floor_) {
        shift_ = shift_ == 0.0 ? kFirstShift : shift_ * kShiftGrowth;
        floor_ = false;  // SetFloor assembles the point again
      }
      SetFloor(true, x);
      continue;
    }
    if (!ok) {
      outcome.exit = NewtonExit::kStepLimit;
      outcome.detail = fmt::format(
          "step {}: the line search found no step that decreases the potential ({:.6g} W, "
          "slope {:.3g} W, last trial t = {:.3g})",
          step, before, slope0, t);
      return outcome;
    }
    // A short step means the exact Newton direction is dominated by a node that the
    // Hessian barely holds (e.g. one joined to the rest only by reverse-biased
    // junctions, whose conductance may be 1e-300 S): the next direction is then computed
    // with every junction's conductance at least its zero-bias value Is/(n*Vt). That
    // Hessian is still positive definite and at least the exact one, so the direction
    // is still a descent direction (Newton's method with Hessian modification, Nocedal
    // and Wright ch. 3.4, recalled from memory); the potential, the line search and the
    // convergence tests stay those of the exact model. A full step switches it off again,
    // so the last steps are exact Newton steps.
    if (t < kTinyStep && !residual.passed() && (t == 0.0 || floor_)) {
      // The direction gave no step (or a vanishing one, even with the junction floor)
      // although KCL does not hold: the next one is turned towards steepest descent.
      shift_ = shift_ == 0.0 ? kFirstShift : std::min(shift_ * kShiftGrowth, kLastShift);
    } else if (t > 0.0) {
      shift_ = shift_ / kShiftGrowth < kFirstShift ? 0.0 : shift_ / kShiftGrowth;
    }
    SetFloor(t < kShortStep, x);
    creeping = t == 1.0 && feasible && Repeats();
    // The update actually taken (the multipliers as in Evaluate).
    for (size_t i = 0; i < step_.size(); ++i) step_[i] *= i < kcl ? t : MultiplierFraction(t);
    potential = accepted.potential;
    potential_magnitude = accepted.potential_magnitude;
    base_log_current = accepted.max_log_current;
    update = CheckUpdate(*mna_, options_, step_, x);
    // As in the classic loop (NewtonSolver::NoiseFloor): where the residual passed, the
    // part of the step that the residual's round-off alone causes is not a move.
    if (!update.passed() && residual.passed() && feasible && NoiseFloor()) {
      update = CheckUpdate(*mna_, options_, step_, x, noise_);
    }
    // And a step that currents of the size of the residual's tolerance could cause
    // (|J^-1 t|) moves only loose nodes, which KCL at the tolerance does not fix: the run
    // ends where the residual passes, and the loose-node pass after it (bias.cc,
    // ResolveFaintNodes) settles or names them. Without this, Newton creeps along the
    // flat valley of a chain of saturated reverse junctions for thousands of steps.
    if (!update.passed() && residual.passed() && feasible &&
        ToleranceSpread(*mna_, options_, *klu_, noise_)) {
      update = CheckUpdate(*mna_, options_, step_, x, noise_);
    }
    if (!std::isfinite(update.value)) {
      outcome.exit = NewtonExit::kNonFinite;
      outcome.detail = fmt::format("step {}: the update of '{}' is not finite", step,
                                   mna_->UnknownName(update.index));
      return outcome;
    }
    if (trace != nullptr) {
      NewtonStepRecord record;
      record.step = step;
      record.max_update = MaxAbs(step_, step_.size());
      record.max_residual = max_residual;
      record.phase = phase;
      record.step_length = t;
      record.potential = before;
      record.potential_change = potential - before;
      record.potential_roundoff = roundoff(accepted);
      record.line_search_trials = trials;
      trace->push_back(std::move(record));
    }
  }
  outcome.exit = NewtonExit::kStepLimit;
  outcome.detail = "potential method: " + StepLimitDetail(*mna_, options_, update);
  return outcome;
}

bool PotentialSolver::Repeats() {
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  const double largest = MaxAbs(step_, kcl);
  bool same = largest > 0.0;
  for (size_t i = 0; i < kcl; ++i) {
    same = same && std::fabs(step_[i] - last_step_[i]) <= kCreepRepeat * largest;
    last_step_[i] = step_[i];
  }
  return same;
}

// A line search for the weak Wolfe conditions (Nocedal and Wright, ch. 3: Armijo's
// sufficient decrease, Armijo 1966, and the curvature condition phi'(t) >= c2 phi'(0);
// the bracketing and zoom phases of their Algorithms 3.5 and 3.6, recalled from memory,
// with bisection as the interpolation). A step that satisfies sufficient decrease while
// the potential still falls at nearly the initial rate is too short: taking it would let
// one junction far below its knee hold the whole network to a tiny step, step after step.
// The search lengthens such a step (t = 2, 4, ...) or, when a longer trial has already
// failed, bisects between the two (geometrically while they differ by more than 4x),
// until the slope has flattened. Sufficient decrease is tested beyond round-off, or
// certified by the slope: for a convex phi, phi(t) <= phi(0) + t*phi'(t), so
// phi'(t) <= c1*phi'(0) proves phi(t) <= phi(0) + c1*t*phi'(0) without subtracting two
// nearly equal potentials. If the budget of trials runs out, the longest step known to
// satisfy sufficient decrease is taken.
bool PotentialSolver::LineSearch(double slope0, double slope_roundoff, double before,
                                 double before_magnitude, double merit0, double log_current_cap,
                                 double curvature, std::span<double> x, double* t_out,
                                 int* trials_out, Trial* accepted) {
  const auto roundoff = [&](const Trial& tr) {
    return MnaSystem::kRoundOffFactor * (tr.potential_magnitude + before_magnitude);
  };
  const auto decreases = [&](const Trial& tr, double t) {
    return (tr.potential - before) + roundoff(tr) <= kArmijoFraction * t * slope0 ||
           tr.slope + slope_roundoff <= kArmijoFraction * slope0;
  };
  // Where the change of the potential is below its own round-off, the potential cannot
  // rank the trial points (a sum of terms up to kW does not see the last nanoamperes of
  // a node). There the residual's weighted sum of squares, which the Newton direction
  // lowers at the rate 2 * merit0, decides with Armijo's condition; a step accepted so
  // does not raise the potential beyond its round-off.
  const auto resolves_residual = [&](const Trial& tr, double t) {
    return t <= 1.0 && std::fabs(tr.potential - before) <= roundoff(tr) &&
           tr.residual_merit <= (1.0 - 2.0 * kArmijoFraction * t) * merit0;
  };
  double lo = 0.0;  // longest step known to satisfy sufficient decrease
  double hi = std::numeric_limits<double>::infinity();  // shortest step known to fail it
  // A direction that a nearly singular Hessian made enormous (1e100 V) is first cut to
  // reach no further than the voltage bound: the solution lies inside it.
  double t = std::min(1.0, voltage_bound_ / MaxAbs(step_, static_cast<size_t>(mna_->kcl_rows())));
  if (!(t > 0.0)) t = 1.0;
  if (t < 1.0) hi = 2.0 * t;  // no doubling past the bound
  int trials = 0;
  while (trials < kMaxLineSearchTrials) {
    Trial trial = Evaluate(base_, t, x);
    ++trials;
    if (trial.finite && trial.max_log_current <= log_current_cap && resolves_residual(trial, t)) {
      *accepted = trial;
      *t_out = t;
      *trials_out = trials;
      return true;
    }
    if (trial.finite && trial.max_log_current <= log_current_cap && decreases(trial, t)) {
      if (trial.slope >= curvature * slope0) {  // flattened (or past the minimum)
        *accepted = trial;
        *t_out = t;
        *trials_out = trials;
        return true;
      }
      lo = t;
    } else {
      hi = t;
    }
    if (std::isinf(hi)) {
      if (t >= kMaxStepLength) break;
      t *= 2.0;
    } else if (lo == 0.0) {
      // Only failures so far: shorten, by quadratic interpolation of phi(0), phi'(0) and
      // phi(t) where that is finite, within [0.1 t, 0.5 t] (Nocedal and Wright, ch. 3).
      const double change = trial.potential - before;
      const double bend = 2.0 * (change - slope0 * t);
      const double guess = trial.finite && bend > 0.0 ? -slope0 * t * t / bend : 0.1 * t;
      t = std::clamp(guess, 0.1 * t, 0.5 * t);
    } else {
      t = hi > 4.0 * lo ? std::sqrt(lo * hi) : 0.5 * (lo + hi);
      if (!(t > lo && t < hi)) break;  // the bracket is as narrow as doubles allow
    }
  }
  if (lo == 0.0) {
    *t_out = t;
    *trials_out = trials;
    return false;
  }
  // Out of trials (or of bracket) with a step that satisfies sufficient decrease: take it.
  // The assembly of the last trial is not that point's, so assemble it again.
  *accepted = Evaluate(base_, lo, x);
  *t_out = lo;
  *trials_out = trials + 1;
  return accepted->finite;
}

// noise_ = |J^-1 a| with the factorisation of the last Newton direction (newton.h).
bool PotentialSolver::NoiseFloor() { return RoundingNoise(*mna_, *klu_, noise_); }

// step_ = the direction dx_ (island coordinates) as node voltages and source currents.
void PotentialSolver::MapStep() {
  std::copy(dx_.begin(), dx_.end(), step_.begin());
  mna_->ToNodeSpace(step_);
}

// Switches the Hessian modification on or off; the Jacobian at x is assembled again when
// it changes (the residual and the potential do not change).
void PotentialSolver::SetFloor(bool on, std::span<const double> x) {
  if (on == floor_) return;
  floor_ = on;
  AssemblyAids aids;
  aids.want_potential = true;
  aids.junction_floor = floor_;
  mna_->Assemble(x, aids);
  ++evaluations_;
}

// Full Newton steps after convergence (exact Hessian, no shift), as NewtonSolver::Polish.
void PotentialSolver::Polish(std::span<double> x, double last_ratio) {
  shift_ = 0.0;
  SetFloor(false, x);
  double merit = ResidualMerit(*mna_, options_);
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  // x + step_ from base_, assembled: whether the polishing test keeps it.
  const auto take = [&] {
    bool inside = true;
    for (size_t i = 0; i < x.size(); ++i) {
      x[i] = base_[i] + step_[i];
      if (i < kcl && !(std::fabs(x[i]) <= voltage_bound_)) inside = false;
    }
    const AssemblyOutcome assembled = mna_->Assemble(x, AssemblyAids{});
    return PolishKept(*mna_, options_, inside && assembled.finite, step_, x, &merit);
  };
  bool masked = false;
  for (int k = 0; PolishGoesOn(k, last_ratio); ++k) {
    std::copy(x.begin(), x.end(), base_.begin());
    NewtonOutcome ignored;
    if (!SolveStep(&ignored)) return;
    const bool any_faint = MarkFaintNodes(*mna_, options_, faint_);
    if (!take()) {
      // As NewtonSolver::Polish: once more without the faint nodes' part (seed 17571: a
      // step that moved a loose string of junctions by volts left 4e-11 A at a node of
      // 0.2 mA).
      if (masked || !any_faint) {
        std::copy(base_.begin(), base_.end(), x.begin());
        return;
      }
      masked = true;
      DropFaintPart(faint_, step_);
      if (!take()) {
        std::copy(base_.begin(), base_.end(), x.begin());
        return;
      }
    }
    if (PolishSettled(*mna_, options_, step_, x, &last_ratio, *klu_, noise_)) return;
  }
}

std::vector<std::string> PotentialSolver::Unsettled(std::span<const double> x) const {
  return UnsettledUnknowns(*mna_, options_, step_, x);
}

}  // namespace knee::internal
