// BiasSolver: plain Newton, then the aid ladder (gmin stepping, source stepping), then a
// final plain Newton run on the exact model and the KCL verification of its answer.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "adjoint.h"
#include "check.h"
#include "forced_junctions.h"
#include "klu_solver.h"
#include "knee/sensitivity.h"
#include "knee/solver.h"
#include "linear_refine.h"
#include "mna.h"
#include "newton.h"
#include "potential.h"
#include "undetermined.h"

namespace knee {

using internal::AssemblyAids;
using internal::KluSolver;
using internal::LinearStatus;
using internal::MnaSystem;
using internal::NewtonExit;
using internal::NewtonOutcome;
using internal::NewtonSolver;

namespace {

constexpr int kMaxGminRetries = 8;  // halvings (in log scale) of a failed gmin rung
// The smallest current tolerance ResolveFaintNodes uses (A).
constexpr double kFaintCurrentFloor = 1e-40;
constexpr int kFaintNewtonSteps = 1000;  // at least, for ResolveFaintNodes' run
constexpr int kFaintRounds = 3;          // ResolveFaintNodes' runs at most
constexpr double kFaintRelTol = 1e-12;   // ResolveFaintNodes' rel_tol, at most
// RerootIslands: a member whose largest current exceeds its root's by this factor.
constexpr double kRerootFactor = 1e3;
constexpr double kLooseMargin = 10.0;  // LooseNodes: spread / voltage tolerance
// The node-voltage clamp (SetVoltageBound): margin times the bound, plus a floor (V).
constexpr double kVoltageBoundMargin = 10.0;
constexpr double kVoltageBoundFloor = 1e4;
constexpr double kJunctionExponents = 800.0;  // thermal scales a junction law spans
constexpr int kMaxSourceRetries = 12;         // subdivisions of a failed source step
constexpr int kMaxSourceRungs = 2000;         // all source-stepping runs together

SolveStatus StatusOf(NewtonExit exit) {
  switch (exit) {
    case NewtonExit::kConverged:
      return SolveStatus::kConverged;
    case NewtonExit::kSingular:
      return SolveStatus::kSingularMatrix;
    case NewtonExit::kNonFinite:
      return SolveStatus::kNonFinite;
    case NewtonExit::kStepLimit:
    case NewtonExit::kFatal:  // the detail says which linear-solver failure it was
      return SolveStatus::kNoConvergence;
  }
  return SolveStatus::kNoConvergence;
}

Diagnostic MessageOnly(std::string message) {
  Diagnostic d;
  d.message = std::move(message);
  return d;
}

// Everything of an element but its name and source location.
void CopyElementNumbers(const Element& from, Element* to) {
  to->kind = from.kind;
  to->node_a = from.node_a;
  to->node_b = from.node_b;
  to->value = from.value;
  to->part = from.part;
  to->area = from.area;
  to->temp = from.temp;
}

// The numbers of a circuit, which a sweep point's circuit is compared with: its node
// count, parts and elements without names or source locations (the solver reads names
// from the caller's circuit).
Circuit NumbersOf(const Circuit& c) {
  Circuit copy;
  copy.temp = c.temp;
  copy.nodes.resize(c.nodes.size());
  copy.parts = c.parts;
  copy.elements.resize(c.elements.size());
  for (size_t e = 0; e < c.elements.size(); ++e) {
    CopyElementNumbers(c.elements[e], &copy.elements[e]);
  }
  return copy;
}

bool SameModel(const DiodeModel& p, const DiodeModel& q) {
  return p.sat_current == q.sat_current && p.ideality == q.ideality &&
         p.series_res == q.series_res && p.breakdown_v == q.breakdown_v &&
         p.breakdown_i == q.breakdown_i && p.breakdown_ideality == q.breakdown_ideality &&
         p.breakdown_tc == q.breakdown_tc && p.bandgap == q.bandgap &&
         p.sat_temp_exp == q.sat_temp_exp && p.ref_temp == q.ref_temp &&
         p.max_current == q.max_current && p.max_reverse_v == q.max_reverse_v &&
         p.max_power == q.max_power;
}

// to = NumbersOf(from), copying only the numbers when both have as many nodes, parts and
// elements (a sweep point). Returns true when at most the values of voltage sources
// changed, each to a finite number (what a sweep of a supply does at every point).
bool AssignValues(const Circuit& from, Circuit* to) {
  if (from.nodes.size() != to->nodes.size() || from.parts.size() != to->parts.size() ||
      from.elements.size() != to->elements.size()) {
    *to = NumbersOf(from);
    return false;
  }
  bool sources_only = from.temp == to->temp;
  to->temp = from.temp;
  for (size_t p = 0; p < from.parts.size(); ++p) {
    sources_only = sources_only && SameModel(from.parts[p].model, to->parts[p].model);
    to->parts[p].model = from.parts[p].model;
  }
  for (size_t e = 0; e < from.elements.size(); ++e) {
    const Element& f = from.elements[e];
    Element& t = to->elements[e];
    if (sources_only && !(f.kind == t.kind && f.node_a == t.node_a && f.node_b == t.node_b &&
                          f.part == t.part && f.area == t.area && f.temp == t.temp &&
                          (f.value == t.value ||
                           (f.kind == ElementKind::kVoltageSource && std::isfinite(f.value))))) {
      sources_only = false;
    }
    CopyElementNumbers(f, &t);
  }
  return sources_only;
}

AssemblyAids WithGmin(double gmin) {
  AssemblyAids aids;
  aids.gmin = gmin;
  return aids;
}

AssemblyAids WithSourceScale(double scale) {
  AssemblyAids aids;
  aids.source_scale = scale;
  return aids;
}

// The most voltage the junctions can hold, summed: each junction's law spans at most
// kJunctionExponents thermal scales on either side (beyond it the exponential is 0 or
// above 1e300 A), or from zero bias up to where its term leaves the doubles when that is
// further (ln(area*Is(T)) of -3000 at 4 K), plus the breakdown voltage. With the sources' volts and
// the current sources' amps times every resistance, it bounds |node voltage| in a network of
// increasing laws (a node above that bound would have every current flowing out of it),
// in the manner of the maximum principle for resistor networks (common practice, no
// source); the clamp uses it with a wide margin.
double JunctionSpan(const Circuit& c) {
  double span = 0.0;
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kDiode) continue;
    const DiodeConstants d =
        ComputeDiodeConstants(c.parts[static_cast<size_t>(e.part)].model, e.area, c.DeviceTemp(e));
    span += std::max(kJunctionExponents, kLogDoubleMax - d.log_is) * d.n_vt;
    if (d.has_breakdown) span += std::fabs(d.vbr) + kJunctionExponents * d.nbr_vt;
  }
  return std::isfinite(span) ? span : 0.0;
}

}  // namespace

struct BiasSolver::Impl {
  // The caller's circuit of Create() or of the last UpdateValues(); no copy is kept (a
  // million-element circuit would be held twice).
  const Circuit* circuit;
  // The numbers of that circuit (NumbersOf), kept from the first UpdateValues() on: a
  // sweep point's circuit is compared with them to skip the classification when only
  // sources changed. A single bias point never needs them.
  std::optional<Circuit> last_numbers;
  SolverOptions options;
  MnaSystem mna;
  KluSolver klu;
  // LooseNodes' own factors of the exact Jacobian, made on first need: fresh pivots in
  // `klu` would make every later refactor of the run depend on where that check fell
  // (a sweep's output would then depend on how its points are shared among threads).
  std::optional<KluSolver> probe;
  NewtonSolver newton;
  internal::PotentialSolver potential;
  // Per circuit values (set at Create and UpdateValues): why the network is not
  // monotone, and why a monotone one has no solution, when so.
  std::optional<std::string> non_monotone;
  std::optional<std::string> unbounded;
  // Junctions that voltage sources alone hold (their current is checked at every Solve,
  // against the sources' values then).
  std::vector<internal::ForcedJunction> forced;
  // A part whose saturation current at its temperature is beyond any diode's.
  std::optional<std::string> absurd_saturation;
  // Resistance-free junctions on loops of sources and such junctions (their solved
  // currents are checked in Conclude).
  std::vector<internal::LoopJunction> loop_junctions;
  std::vector<double> loop_current;
  std::vector<double> x;          // working unknowns
  std::vector<double> saved;      // x before a rung, restored when the rung fails
  std::vector<double> converged;  // unknowns of the last converged solve
  std::vector<double> node_residual, node_allowance, node_flow;  // Verify's, with islands
  std::vector<double> spread;                                    // LooseNodes' |J^-1 t|
  internal::UndeterminedTest undetermined;                       // NameUndetermined's
  // Whether klu holds the exact Jacobian's factors from the run that converged (the
  // solver's exact_factors()), which LooseNodes may then use as they are.
  bool factors_exact = false;
  bool rerooted = false;       // mna's islands are rooted by a solution (RerootIslands)
  double junction_span = 0.0;  // V, JunctionSpan(circuit)
  bool trace_on = false;
  std::vector<NewtonStepRecord> trace;
  // Whether the last Solve() converged (Sensitivity() differentiates only that point),
  // and the adjoint method's buffers, made on first use.
  bool last_converged = false;
  std::unique_ptr<internal::AdjointWorkspace> adjoint;

  Impl(const Circuit& c, const SolverOptions& o)
      : circuit(&c),
        options(o),
        mna(c),
        newton(&mna, &klu, o, mna.size()),
        potential(&mna, &klu, o, mna.size()) {
    Resize();
    Classify();
  }

  void Classify() {
    non_monotone = internal::NonMonotoneReason(*circuit);
    unbounded.reset();
    if (!non_monotone) unbounded = internal::FindUnboundedCut(*circuit);
    forced = internal::FindForcedJunctions(*circuit);
    absurd_saturation = internal::OutOfRangeSaturation(*circuit);
    loop_junctions = internal::LoopJunctions(*circuit);
    junction_span = JunctionSpan(*circuit);
  }

  // A bound on |node voltage| for the classic loop's clamp (newton.h): the sources'
  // part is recomputed at every Solve (a sweep of a supply changes it), the junctions'
  // part only with the parts and temperatures.
  void SetVoltageBound() {
    double volts = 0.0, amps = 0.0, ohms = 0.0;
    for (const Element& e : circuit->elements) {
      if (e.kind == ElementKind::kVoltageSource) volts += std::fabs(e.value);
      if (e.kind == ElementKind::kCurrentSource) amps += std::fabs(e.value);
      if (e.kind == ElementKind::kResistor) ohms += std::fabs(e.value);
      if (e.kind == ElementKind::kDiode) {
        ohms += circuit->parts[static_cast<size_t>(e.part)].model.series_res / e.area;
      }
    }
    const double bound =
        kVoltageBoundMargin * (volts + amps * ohms + junction_span) + kVoltageBoundFloor;
    newton.set_voltage_bound(bound);
    potential.set_voltage_bound(bound);
  }

  void Resize() {
    const auto n = static_cast<size_t>(mna.size());
    x.assign(n, 0.0);
    saved.assign(n, 0.0);
    converged.clear();
  }

  std::optional<std::string> Analyze() {
    if (mna.size() == 0) return std::string("the circuit has no unknowns to solve for");
    if (klu.Analyze(mna.size(), mna.col_ptr(), mna.row_index()) != LinearStatus::kOk) {
      return "cannot order the circuit matrix: " + klu.message();
    }
    return std::nullopt;
  }

  NewtonOutcome Run(const AssemblyAids& aids, const std::string& phase, SolveSummary* s) {
    NewtonOutcome out = newton.Run(aids, phase, x, trace_on ? &trace : nullptr);
    s->newton_steps += out.steps;
    return out;
  }

  bool GminLadder(SolveSummary* s, std::string* log);
  bool SourceLadder(SolveSummary* s, std::string* log);
  void Verify(SolveSummary* s);
  // A converged run: verified on the exact model, filled in, kept for warm starts.
  void Conclude(SolveSummary* s, Solution* solution) {
    RerootIslands(s);
    ResolveFaintNodes(s);
    Verify(s);
    NameUndetermined(s);
    CheckLoopJunctions(s);
    if (solution != nullptr) Fill(solution);
    if (s->status == SolveStatus::kConverged) converged = x;
    last_converged = s->status == SolveStatus::kConverged;
  }
  void Fill(Solution* solution) const;
  // The nodes a verified answer leaves undetermined (undetermined.h), from the exact
  // Jacobian that Verify assembled at x.
  void NameUndetermined(SolveSummary* s) {
    if (s->status != SolveStatus::kConverged) return;
    for (int u : undetermined.Run(*circuit, mna, x, options, klu, factors_exact, probe)) {
      s->undetermined_nodes.push_back(mna.UnknownName(u));
    }
  }
  // A verified answer in which a junction that only sources and junctions limit carries
  // more than any diode could is out of range (forced_junctions.h).
  void CheckLoopJunctions(SolveSummary* s) {
    if (loop_junctions.empty() || s->status != SolveStatus::kConverged) return;
    loop_current.assign(circuit->elements.size(), 0.0);
    mna.devices().Measure(x, [&](int element, const internal::DeviceReport& r) {
      loop_current[static_cast<size_t>(element)] = r.current;
    });
    if (auto problem = internal::LoopJunctionProblem(*circuit, loop_junctions, loop_current)) {
      s->status = SolveStatus::kOutOfRange;
      s->unique = false;
      s->detail = std::move(*problem);
    }
  }
  // The MNA system (and everything that holds its pattern) built anew: with each island
  // rooted at the member of largest weight (RerootIslands), or as Create() built it.
  void Rebuild(std::span<const double> node_weight) {
    mna = MnaSystem(*circuit, node_weight);
    newton = NewtonSolver(&mna, &klu, options, mna.size());
    potential = internal::PotentialSolver(&mna, &klu, options, mna.size());
    probe.reset();
    factors_exact = false;
    const auto problem = Analyze();
    KNEE_CHECK(!problem);  // the same nodes and elements were analysed at Create()
    SetVoltageBound();
  }
  void RerootIslands(SolveSummary* s);
  void ResolveFaintNodes(SolveSummary* s);
  // The nodes that currents of the size of the tolerance (rounding = false) or of the
  // residual's round-off allowance (rounding = true) move by more than the voltage
  // tolerance; *scale is the factor on the current tolerance that would fix them.
  std::vector<int> LooseNodes(const SolverOptions& o, bool rounding, double* scale);
  std::vector<int> UntiedNodes(const SolverOptions& o, bool rounding);
};

// A loose node: KCL at the current tolerance does not fix its voltage to the voltage
// tolerance (a node held only by junctions of 1e-20 A parts, or a group of nodes held
// as a whole only by saturated reverse junctions, whose currents no longer depend on
// where the group sits). Which voltage a solver ends at there depends on its path. The
// test: the voltage change that currents of the size of the tolerance cause,
// |J^-1 t| with t_r = abs_current_tol (ToleranceSpread), exceeds the voltage tolerance.
// A loose point is taken one Newton run further with the current tolerance scaled down
// until it would fix those nodes (down to kFaintCurrentFloor), from the point itself
// (the settling runs of docs/solver.md). This test only steers those runs; what a report
// names is the separate undetermined-node test (undetermined.h, NameUndetermined).
std::vector<int> BiasSolver::Impl::LooseNodes(const SolverOptions& o, bool rounding,
                                              double* scale) {
  std::vector<int> loose;
  *scale = 1.0;
  // Loose by the tolerance only beyond kLooseMargin times the voltage tolerance: a node a
  // picoampere moves by a few microvolts (a bridge floating on 1 MOhm references) is
  // settled by the polishing steps, not worth a run of its own at every sweep point.
  const double margin = rounding ? 1.0 : kLooseMargin;
  mna.AssembleExact(x);
  spread.resize(x.size());
  const auto solve_spread = [&](KluSolver& factors) {
    return rounding ? internal::RoundingNoise(mna, factors, spread)
                    : internal::ToleranceSpread(mna, o, factors, spread);
  };
  // The factors of the exact Jacobian one converged step from x, when the solver that
  // ran left them (its exact_factors()), give |J^-1 t| for one solve. A step's factors of
  // a shunted or floored matrix would hide exactly the nodes sought here; those are
  // replaced by fresh factors in a second KLU object made on first need, not in the
  // run's own: fresh pivots there would make every later refactor, and so a sweep's last
  // digits, depend on where the check fell. A group of nodes held as a whole only weakly
  // (two nodes joined by 10 kOhm and to the rest by 100 MOhm) shows only in this solve,
  // not in any single row.
  bool solved = factors_exact && solve_spread(klu);
  if (!solved) {
    if (!probe) {
      probe.emplace();
      if (probe->Analyze(mna.size(), mna.col_ptr(), mna.row_index()) != LinearStatus::kOk) {
        probe.reset();
      }
    }
    solved = probe && probe->Factor(mna.values()) == LinearStatus::kOk && solve_spread(*probe);
  }
  if (!solved) {
    *scale = 0.0;
    loose = UntiedNodes(o, rounding);
    if (!loose.empty()) return loose;
    for (int r = 0; r < mna.kcl_rows(); ++r) {
      if (!mna.IsSourceRow(r)) loose.push_back(r);  // singular: nothing is known to be fixed
    }
    return loose;
  }
  for (int u = 0; u < mna.kcl_rows(); ++u) {
    const auto i = static_cast<size_t>(u);
    const double tolerance = o.abs_voltage_tol + o.rel_tol * std::fabs(x[i]);
    if (!(spread[i] <= margin * tolerance)) {
      loose.push_back(u);
      *scale = std::min(*scale, tolerance / spread[i]);
    }
  }
  return loose;
}

// An island root's own KCL is known only to the round-off of its island's sum (its row),
// so a root whose currents at the solution are far below a member's has its own balance
// lost in that member's rounding: a node held by 7e-13 A through 73 MOhm, rooted by its
// junctions' series resistance beside a member carrying 11.5 A (torture seed 14210),
// kept 2e-15 A of residual, 2e-8 V. Such islands are rooted again at their member of
// largest current and the point taken one Newton run further. Solve() restores the
// roots of Create(), so that no result depends on the points solved before it.
void BiasSolver::Impl::RerootIslands(SolveSummary* s) {
  if (!mna.has_islands()) return;
  mna.AssembleExact(x);
  const auto rows = static_cast<size_t>(mna.kcl_rows());
  node_residual.resize(rows);
  node_allowance.resize(rows);
  node_flow.resize(rows);
  mna.NodeResidual(node_residual, node_allowance, node_flow);
  bool lopsided = false;
  for (int u = 0; u < mna.kcl_rows() && !lopsided; ++u) {
    const int root = mna.islands().root_of(u);
    lopsided = root >= 0 && node_flow[static_cast<size_t>(u)] >
                                kRerootFactor * node_flow[static_cast<size_t>(root)];
  }
  if (!lopsided) return;
  const std::vector<double> weight = node_flow;
  Rebuild(weight);
  rerooted = true;
  saved = x;
  const NewtonOutcome out = Run(AssemblyAids{}, "newton (island roots)", s);
  factors_exact = out.exit == NewtonExit::kConverged && newton.exact_factors();
  if (out.exit != NewtonExit::kConverged) x = saved;
}

// A Jacobian singular at x has a junction conductance that underflowed to 0 (a node
// between matched saturated junctions: exp(-4000) is 0). Which voltages that leaves
// undetermined is read from the network's graph rather than from a shifted solve (a
// shift holds the null space by itself; see docs/solver.md, "Known gaps"): an element
// ties its two nodes when its conductance g at x moves either node by less than its
// voltage tolerance under the current uncertainty of the test (the current tolerance, or
// the rounding of the node's largest current with `rounding`): g * tol_v >= that
// current. Voltage sources always tie. The loose nodes are those no chain of ties joins
// to gnd; none found (a singularity of another cause) leaves the caller naming all.
std::vector<int> BiasSolver::Impl::UntiedNodes(const SolverOptions& o, bool rounding) {
  const size_t nodes = circuit->nodes.size();
  std::vector<double> largest(nodes, 0.0);  // largest element current at each node
  const auto each_element = [&](const auto& fn) {
    mna.devices().Measure(x, [&](int element, const internal::DeviceReport& r) {
      fn(circuit->elements[static_cast<size_t>(element)], r);
    });
  };
  each_element([&](const Element& e, const internal::DeviceReport& r) {
    for (int n : {e.node_a, e.node_b}) {
      largest[static_cast<size_t>(n)] =
          std::max(largest[static_cast<size_t>(n)], std::fabs(r.current));
    }
  });
  std::vector<int> parent(nodes);
  for (size_t n = 0; n < nodes; ++n) parent[n] = static_cast<int>(n);
  const auto find = [&](int n) {
    while (parent[static_cast<size_t>(n)] != n)
      n = parent[static_cast<size_t>(n)] =
          parent[static_cast<size_t>(parent[static_cast<size_t>(n)])];
    return n;
  };
  const auto uncertainty = [&](int n) {
    const double i = largest[static_cast<size_t>(n)];
    return rounding ? MnaSystem::kRoundOffFactor * i : o.abs_current_tol + o.rel_tol * i;
  };
  const auto tolerance = [&](int n) {
    return n == kGroundNode
               ? HUGE_VAL
               : o.abs_voltage_tol +
                     o.rel_tol * std::fabs(x[static_cast<size_t>(internal::UnknownOfNode(n))]);
  };
  each_element([&](const Element& e, const internal::DeviceReport& r) {
    double g = 0.0;
    switch (e.kind) {
      case ElementKind::kResistor:
        g = 1.0 / std::fabs(e.value);
        break;
      case ElementKind::kVoltageSource:
        g = HUGE_VAL;
        break;
      case ElementKind::kCurrentSource:
        return;
      case ElementKind::kDiode:
        g = 1.0 / r.small_signal_res;
        break;
    }
    const bool ties = g * std::min(tolerance(e.node_a), tolerance(e.node_b)) >=
                      std::max(uncertainty(e.node_a), uncertainty(e.node_b));
    if (ties) parent[static_cast<size_t>(find(e.node_a))] = find(e.node_b);
  });
  std::vector<int> loose;
  const int grounded = find(kGroundNode);
  for (size_t n = 1; n < nodes; ++n) {
    if (find(static_cast<int>(n)) != grounded)
      loose.push_back(internal::UnknownOfNode(static_cast<int>(n)));
  }
  return loose;
}

void BiasSolver::Impl::ResolveFaintNodes(SolveSummary* s) {
  double scale = 1.0;
  std::vector<int> loose = LooseNodes(options, /*rounding=*/false, &scale);
  if (loose.empty()) return;
  SolverOptions tight = options;
  // Leakage-balanced nodes move at most about n*Vt per step (Newton on a balance of two
  // exponential tails), so this run gets more steps than a rung of the ladder.
  tight.max_newton_steps = std::max(options.max_newton_steps, kFaintNewtonSteps);
  // The relative part of the residual test too: a node between two nearly saturated
  // junctions balances the last e^-14 of their currents, 1e-6 of them, which rel_tol's
  // 1e-6 of its largest current does not resolve (torture seed 37532: 5.8 mV of 108 V).
  tight.rel_tol = std::min(options.rel_tol, kFaintRelTol);
  // Which nodes are loose is still judged against the solve's own voltage tolerance.
  const auto judged = [&] {
    SolverOptions o = tight;
    o.rel_tol = options.rel_tol;
    return o;
  };
  saved = x;
  bool kept = false;
  // Where plain Newton does not settle a monotone network's loose nodes (a string of
  // junctions it left volts from their balance, torture seed 5185), the potential
  // method from the same point gets the usual step limit.
  const bool monotone = !non_monotone && !unbounded;
  // The scale is first-order: on an exponential it can fall short, and a loose node
  // whose every current is below the scaled tolerance would still be exempt from the
  // update test as faint. So the tolerance also goes below a tenth of the loose nodes'
  // own largest currents, and the test is repeated after each run (kFaintRounds).
  for (int round = 0; round < kFaintRounds && !loose.empty(); ++round) {
    const auto flow = mna.flow();  // at x: LooseNodes assembled it
    double weakest = HUGE_VAL;
    for (int u : loose) {
      const double f = flow[static_cast<size_t>(u)];
      if (f > 0.0) weakest = std::min(weakest, f);
    }
    tight.abs_current_tol =
        std::max(std::min(0.1 * scale * tight.abs_current_tol, 0.1 * weakest), kFaintCurrentFloor);
    newton.set_options(tight);
    NewtonOutcome out = Run(AssemblyAids{}, "newton (loose nodes)", s);
    newton.set_options(options);
    factors_exact = newton.exact_factors();
    if (out.exit != NewtonExit::kConverged && monotone) {
      x = saved;
      SolverOptions fallback = tight;
      fallback.max_newton_steps = options.max_newton_steps;
      potential.set_options(fallback);
      potential.set_stiff_conductance(internal::StiffJunctionConductance(*circuit));
      out = potential.Run(x, trace_on ? &trace : nullptr);
      s->newton_steps += out.steps;
      potential.set_options(options);
      factors_exact = potential.exact_factors();
    }
    kept = false;
    if (out.exit == NewtonExit::kConverged) {
      // Kept only if it is a solution at least as good, by the same test as the first.
      SolveSummary check;
      Verify(&check);
      kept = check.status == SolveStatus::kConverged;
    }
    if (!kept) {
      x = saved;  // the last point that passed
      break;
    }
    saved = x;
    loose = LooseNodes(judged(), /*rounding=*/false, &scale);
  }
  s->settling_current_tol = tight.abs_current_tol;
}

// gmin from gmin_start down by gmin_factor to gmin_stop, each rung warm-started from the
// previous one; a failed rung is retried with the geometric mean of it and the last good
// gmin. The shunt is then removed by the caller's final plain Newton run.
bool BiasSolver::Impl::GminLadder(SolveSummary* s, std::string* log) {
  double g = options.gmin_start;
  double last_good = -1.0;
  int retries = 0;
  while (true) {
    saved = x;
    const NewtonOutcome out = Run(WithGmin(g), fmt::format("gmin {:.3g}", g), s);
    if (out.exit == NewtonExit::kConverged) {
      if (g <= options.gmin_stop) return true;
      last_good = g;
      g = std::max(g / options.gmin_factor, options.gmin_stop);
      continue;
    }
    x = saved;
    if (out.exit == NewtonExit::kFatal || last_good < 0.0 || ++retries > kMaxGminRetries) {
      *log += fmt::format("; gmin stepping stopped at gmin {:.3g} S: {}", g, out.detail);
      return false;
    }
    g = std::sqrt(last_good * g);
  }
}

// Every independent source ramped from 0 to 100 % in source_steps equal steps; a failed
// step is halved (and the step grows back after a success).
bool BiasSolver::Impl::SourceLadder(SolveSummary* s, std::string* log) {
  const double full_step = 1.0 / options.source_steps;
  double done = 0.0;
  double step = full_step;
  int retries = 0;
  std::fill(x.begin(), x.end(), 0.0);
  for (int rung = 0; rung < kMaxSourceRungs; ++rung) {
    const double target = std::min(1.0, done + step);
    saved = x;
    const NewtonOutcome out =
        Run(WithSourceScale(target), fmt::format("source {:.4g}%", 100.0 * target), s);
    if (out.exit == NewtonExit::kConverged) {
      done = target;
      if (done >= 1.0) return true;
      step = std::min(full_step, 2.0 * step);
      continue;
    }
    x = saved;
    if (out.exit == NewtonExit::kFatal || ++retries > kMaxSourceRetries) {
      *log += fmt::format("; source stepping stopped at {:.4g}%: {}", 100.0 * target, out.detail);
      return false;
    }
    step /= 2.0;
  }
  *log += fmt::format("; source stepping used {} runs and reached only {:.4g}%", kMaxSourceRungs,
                      100.0 * done);
  return false;
}

// The KCL residual of every node (internal nodes included) of the exact model.
double MaxAbs(std::span<const double> v) {
  double m = 0.0;
  for (double e : v) m = std::max(m, std::fabs(e));
  return m;
}

void BiasSolver::Impl::Verify(SolveSummary* s) {
  const internal::AssemblyOutcome exact = mna.AssembleExact(x);
  const auto rows = static_cast<size_t>(mna.kcl_rows());
  // Without islands every node's own sums are its row's (NodeResidual would copy them:
  // three arrays of a million nodes at the end of the solve).
  const bool own = mna.has_islands();
  if (own) {
    node_residual.resize(rows);
    node_allowance.resize(rows);
    node_flow.resize(rows);
    mna.NodeResidual(node_residual, node_allowance, node_flow);
  }
  const std::span<const double> f = own ? node_residual : mna.residual().first(rows);
  const std::span<const double> flow = own ? node_flow : mna.flow().first(rows);
  const auto allowance = [&](int r) {
    return own ? node_allowance[static_cast<size_t>(r)] : mna.RoundOffAllowance(r);
  };
  int worst = -1;
  int failed = -1;
  double failed_bound = 0.0;
  for (int r = 0; r < mna.kcl_rows(); ++r) {
    const auto i = static_cast<size_t>(r);
    const double residual = std::fabs(f[i]);
    if (worst < 0 || !(residual <= std::fabs(f[static_cast<size_t>(worst)]))) worst = r;
    const double bound = options.verify_current_tol + options.rel_tol * flow[i] + allowance(r);
    if (failed < 0 && !(residual <= bound)) {
      failed = r;
      failed_bound = bound;
    }
  }
  s->max_kcl_residual = worst >= 0 ? std::fabs(f[static_cast<size_t>(worst)]) : 0.0;
  s->worst_node = worst >= 0 ? mna.UnknownName(worst) : "";
  if (!exact.finite) {
    s->status = SolveStatus::kVerificationFailed;
    s->detail += "; verification: the exact model is not finite at the solution";
  } else if (exact.unresolved_element >= 0) {
    s->status = SolveStatus::kVerificationFailed;
    s->detail += fmt::format(
        "; verification: the junction voltage of '{}' is lost in the rounding of its node "
        "voltages (largest |v| {:.3g} V): not a solution",
        mna.ElementName(exact.unresolved_element), MaxAbs(x));
  } else if (failed >= 0) {
    s->status = SolveStatus::kVerificationFailed;
    s->detail += fmt::format("; verification: KCL residual at '{}' is {:.3g} A > {:.3g} A",
                             mna.UnknownName(failed), std::fabs(f[static_cast<size_t>(failed)]),
                             failed_bound);
  } else {
    s->status = SolveStatus::kConverged;
  }
}

void BiasSolver::Impl::Fill(Solution* solution) const {
  const size_t nodes = circuit->nodes.size();
  const size_t elements = circuit->elements.size();
  const double nan = std::numeric_limits<double>::quiet_NaN();
  solution->node_voltage.assign(nodes, 0.0);
  for (size_t n = 1; n < nodes; ++n) solution->node_voltage[n] = x[n - 1];
  solution->element_voltage.assign(elements, 0.0);
  solution->element_current.assign(elements, 0.0);
  solution->junction_voltage.assign(elements, nan);
  solution->small_signal_res.assign(elements, nan);
  mna.devices().Measure(x, [&](int element, const internal::DeviceReport& r) {
    const auto e = static_cast<size_t>(element);
    solution->element_voltage[e] = r.voltage;
    solution->element_current[e] = r.current;
    if (circuit->elements[e].kind == ElementKind::kDiode) {
      solution->junction_voltage[e] = r.junction_voltage;
      solution->small_signal_res[e] = r.small_signal_res;
    }
  });
}

Result<std::unique_ptr<BiasSolver>> BiasSolver::Create(const Circuit& circuit,
                                                       const SolverOptions& options) {
  if (auto problem = Validate(options)) return MessageOnly(*problem);
  auto impl = std::make_unique<Impl>(circuit, options);
  if (auto problem = impl->Analyze()) return MessageOnly(*problem);
  return std::unique_ptr<BiasSolver>(new BiasSolver(std::move(impl)));
}

BiasSolver::BiasSolver(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
BiasSolver::~BiasSolver() = default;

void BiasSolver::UpdateValues(const Circuit& circuit) {
  Impl& m = *impl_;
  m.last_converged = false;  // the last solution is not one of these values
  // Neither classification depends on the value of a voltage source, except through its
  // finiteness: a sweep of a supply skips both (a max-flow over the network per point).
  // The first update has nothing to compare with and classifies again.
  bool sources_only = false;
  if (m.last_numbers) {
    sources_only = AssignValues(circuit, &*m.last_numbers);
  } else {
    m.last_numbers = NumbersOf(circuit);
  }
  m.circuit = &circuit;
  if (!sources_only || m.non_monotone) m.Classify();
  if (m.mna.StructureMatches(circuit)) {
    m.mna.UpdateValues(circuit);
    return;
  }
  // The structure changed: the unknowns and the pattern are rebuilt (and warm starts of
  // the old size are ignored).
  m.mna = MnaSystem(circuit);
  m.newton = NewtonSolver(&m.mna, &m.klu, m.options, m.mna.size());
  m.potential = internal::PotentialSolver(&m.mna, &m.klu, m.options, m.mna.size());
  m.Resize();
  const auto problem = m.Analyze();
  KNEE_CHECK(!problem);  // the same nodes and elements were analysed at Create()
}

SolveSummary BiasSolver::Solve(Solution* solution, std::span<const double> start, bool allow_aids) {
  Impl& m = *impl_;
  m.trace.clear();
  m.last_converged = false;
  if (m.rerooted) {
    m.Rebuild({});
    m.rerooted = false;
  }
  m.SetVoltageBound();
  SolveSummary s;
  const bool warm = start.size() == m.x.size();
  const auto reset = [&] {
    if (warm) {
      std::copy(start.begin(), start.end(), m.x.begin());
    } else {
      std::fill(m.x.begin(), m.x.end(), 0.0);
    }
  };
  // The potential method for monotone networks (docs/solver.md, "The potential method").
  s.unique = !m.non_monotone;
  std::string log;
  const SolverMethod method = m.options.method;
  if (method == SolverMethod::kPotential && m.non_monotone) {
    s.method = SolverMethod::kPotential;
    s.detail = "the potential method needs a monotone network: " + *m.non_monotone;
    return s;
  }
  // A monotone network with no solution is found by its topology, whichever method was
  // asked for: the classic ladder would otherwise iterate to its limits (1,849 steps on
  // one current source against one reverse diode) and end without the reason.
  if (!m.non_monotone && m.unbounded) {
    s.method = method == SolverMethod::kClassic ? SolverMethod::kClassic : SolverMethod::kPotential;
    s.unique = false;
    s.status = SolveStatus::kNoSolution;
    s.detail = *m.unbounded;
    return s;
  }
  // A junction across sources with no resistance carries whatever the law gives at the
  // sources' voltage: beyond any diode (or the doubles) it is said so before any step,
  // instead of a number no circuit produces (3.3e70 A for 1e-14 A across 5 V).
  std::optional<std::string> problem = m.absurd_saturation;
  if (!problem) problem = internal::ForcedJunctionProblem(*m.circuit, m.forced);
  if (problem) {
    s.method = method == SolverMethod::kClassic ? SolverMethod::kClassic : SolverMethod::kPotential;
    s.unique = false;
    s.status = SolveStatus::kOutOfRange;
    s.detail = std::move(*problem);
    return s;
  }
  // From a warm start (a neighbouring sweep point's solution) Newton is already in its
  // quadratic region: auto tries plain Newton first there, since the potential method's
  // fresh factorisation at every step and its step onto the sources' constraints cost a
  // third of a sweep's time (bridge rectifier, 400,001 points: 3.06 s against 2.30 s).
  if (method == SolverMethod::kAuto && warm && !m.non_monotone) {
    reset();
    const NewtonOutcome out = m.Run(AssemblyAids{}, "newton (warm start)", &s);
    if (out.exit == NewtonExit::kConverged) {
      s.method = SolverMethod::kClassic;
      s.detail = "newton from the warm start: " + out.detail;
      m.factors_exact = m.newton.exact_factors();
      m.Conclude(&s, solution);
      return s;
    }
  }
  if (method != SolverMethod::kClassic && !m.non_monotone) {
    s.method = SolverMethod::kPotential;
    reset();
    m.potential.set_stiff_conductance(internal::StiffJunctionConductance(*m.circuit));
    const NewtonOutcome run = m.potential.Run(m.x, m.trace_on ? &m.trace : nullptr);
    s.newton_steps += run.steps;
    if (run.exit == NewtonExit::kConverged || method == SolverMethod::kPotential) {
      s.detail = run.detail;
      if (run.exit != NewtonExit::kConverged) {
        s.status = StatusOf(run.exit);
        s.unsettled = m.potential.Unsettled(m.x);
        return s;
      }
      m.factors_exact = m.potential.exact_factors();
      m.Conclude(&s, solution);
      return s;
    }
    log = "potential: " + run.detail + "; then the classic ladder: ";
  }
  s.method = SolverMethod::kClassic;
  reset();
  NewtonOutcome out = m.Run(AssemblyAids{}, "newton", &s);
  log += "newton: " + out.detail;
  const auto try_aid = [&](bool enabled, const char* name, auto ladder) {
    if (!enabled || !allow_aids || out.exit == NewtonExit::kConverged ||
        out.exit == NewtonExit::kFatal)
      return;
    reset();
    if (!(m.*ladder)(&s, &log)) return;
    s.aids.push_back(name);
    out = m.Run(AssemblyAids{}, "newton (no aid)", &s);
    log += fmt::format("; after {}: {}", name, out.detail);
  };
  try_aid(m.options.gmin_stepping, "gmin stepping", &Impl::GminLadder);
  try_aid(m.options.source_stepping, "source stepping", &Impl::SourceLadder);

  s.detail = std::move(log);
  if (out.exit != NewtonExit::kConverged) {
    s.status = StatusOf(out.exit);
    s.unsettled = m.newton.Unsettled(m.x);
    return s;
  }
  m.factors_exact = m.newton.exact_factors();
  m.Conclude(&s, solution);
  return s;
}

Status BiasSolver::Sensitivity(std::span<const WeightedQuantity> quantity,
                               CircuitGradient* gradient) {
  Impl& m = *impl_;
  if (!m.last_converged || m.converged.size() != m.x.size()) {
    return MessageOnly("no converged solution to differentiate");
  }
  if (!m.adjoint) m.adjoint = std::make_unique<internal::AdjointWorkspace>();
  std::string problem = internal::ComputeSensitivity(*m.circuit, m.mna, m.klu, m.factors_exact,
                                                     m.converged, quantity, *m.adjoint, gradient);
  if (!problem.empty()) return MessageOnly(std::move(problem));
  return Done{};
}

std::span<const double> BiasSolver::unknowns() const { return impl_->converged; }
int BiasSolver::unknown_count() const { return impl_->mna.size(); }
void BiasSolver::set_trace(bool on) { impl_->trace_on = on; }
const std::vector<NewtonStepRecord>& BiasSolver::trace() const { return impl_->trace; }

}  // namespace knee
