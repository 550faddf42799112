// Stage 3, after a strategy ends: a failed run says what still moved; a converged one is
// re-rooted where its islands need it, its loose nodes settled or named, verified on the
// exact model without any aid, checked for junctions out of range, and filled in.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "bias_impl.h"

namespace knee {

using internal::AssemblyAids;
using internal::NewtonExit;
using internal::NewtonOutcome;

namespace {

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

double MaxAbs(std::span<const double> v) {
  double m = 0.0;
  for (double e : v) m = std::max(m, std::fabs(e));
  return m;
}

}  // namespace

void BiasSolver::Impl::Finish(const Ending& end, SolveSummary* s, Solution* solution) {
  if (end.exit != NewtonExit::kConverged) {
    s->status = StatusOf(end.exit);
    s->unsettled = end.by_potential ? potential.Unsettled(x) : newton.Unsettled(x);
    return;
  }
  factors_exact = end.by_potential ? potential.exact_factors() : newton.exact_factors();
  // Not held while the faint nodes' Newton run makes its own vectors (Conclude's release
  // comes after that run; without this one the 1e6 ladder's peak is 20 MB higher).
  if (end.by_potential) potential.ReleaseWorkspace();
  Conclude(s, solution);
}

// A converged run: verified on the exact model, filled in, kept for warm starts.
void BiasSolver::Impl::Conclude(SolveSummary* s, Solution* solution) {
  RerootIslands(s);
  ResolveFaintNodes(s);
  // A cold solve is taken as a single bias point until a warm one follows: each iteration
  // workspace goes once its last reader has run, so that none is held beside the next
  // stage's own (a million-unknown network: Newton's 40 MB beside the undetermined-node
  // test's 16, or beside the solution being filled). A sweep's first warm point sizes
  // them again, once; warm solves keep them.
  const bool cold = !warm();
  if (cold) ReleaseIterationWorkspaces();
  Verify(s);
  NameUndetermined(s);
  if (cold) undetermined.ReleaseWorkspace();
  CheckLoopJunctions(s);
  // A caller that asked for one point reads only the solution from now on: the factors
  // and the matrix (on the 1e6 ladder 200 MB) need not be held while it is filled. A
  // heated circuit's balance solves and differentiates many points, so keeps them.
  if (single_point && !thermal) ReleaseMatrix();
  if (s->status == SolveStatus::kConverged) converged = x;
  if (solution != nullptr) Fill(solution);
  last_converged = s->status == SolveStatus::kConverged;
}

void BiasSolver::Impl::ReleaseIterationWorkspaces() {
  newton.ReleaseWorkspace();
  potential.ReleaseWorkspace();
  std::vector<double>().swap(spread);
  std::vector<double>().swap(saved);
}

void BiasSolver::Impl::ReleaseMatrix() {
  klu = internal::KluSolver();
  probe.reset();
  factors_exact = false;
  mna.ReleaseBuffers();
}

void BiasSolver::Impl::CheckLoopJunctions(SolveSummary* s) {
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

// An island root's own KCL is known only to the round-off of its island's sum (its row),
// so a root whose currents at the solution are far below a member's has its own balance
// lost in that member's rounding (a node held by 1e-12 A through tens of megohms, as
// root beside a member carrying amperes). Such islands are rooted again at their member of
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
                                tuning.islands.reroot_factor * node_flow[static_cast<size_t>(root)];
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

// The KCL residual of every node of the exact model, against the verification bound.
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
  if (!exact.finite || exact.unresolved_element >= 0 || failed >= 0) DescribeDeferred(s);
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

void BiasSolver::Impl::DescribeDeferred(SolveSummary* s) {
  if (!deferred_note) return;
  s->detail = "newton from the warm start: " + newton.Describe(*deferred_note) + s->detail;
  deferred_note.reset();
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
  solution->junction_temp.assign(elements, nan);
  for (size_t e = 0; e < elements; ++e) {
    const Element& element = circuit->elements[e];
    if (element.kind == ElementKind::kDiode)
      solution->junction_temp[e] = circuit->DeviceTemp(element);
  }
  // Without self-heating every sink is at the ambient; the thermal solve sets its own.
  solution->sink_temp.assign(circuit->heatsinks.size(), circuit->temp);
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

}  // namespace knee
