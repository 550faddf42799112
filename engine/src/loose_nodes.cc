// Loose nodes after a converged solve: nodes whose voltage KCL at the current tolerance
// does not fix (LooseNodes, UntiedNodes), settled with a tolerance scaled to them or
// named (ResolveFaintNodes). The criterion is documented in docs/solver.md.
#include <algorithm>
#include <cmath>

#include "bias_impl.h"
#include "device_kinds.h"
#include "disjoint_set.h"

namespace knee {

using internal::AssemblyAids;
using internal::KluSolver;
using internal::LinearStatus;
using internal::MnaSystem;
using internal::NewtonExit;
using internal::NewtonOutcome;

// A loose node: KCL at the current tolerance does not fix its voltage to the voltage
// tolerance (a node held only by junctions of 1e-20 A parts, or a group of nodes held
// as a whole only by saturated reverse junctions, whose currents no longer depend on
// where the group sits). Which voltage a solver ends at there depends on its path. The
// test: the voltage change that currents of the size of the tolerance cause,
// |J^-1 t| with t_r = abs_current_tol (ToleranceSpread), exceeds the voltage tolerance.
// A loose point is taken one Newton run further with the current tolerance scaled down
// until it would fix those nodes (down to LooseNodeTuning::current_floor), from the point
// itself (the settling runs of docs/solver.md). This test only steers those runs; what a
// report names is the separate undetermined-node test (undetermined.h, NameUndetermined).
std::vector<int> BiasSolver::Impl::LooseNodes(const SolverOptions& o, bool rounding,
                                              double* scale) {
  std::vector<int> loose;
  *scale = 1.0;
  // Loose by the tolerance only beyond LooseNodeTuning::margin times the voltage tolerance: a node
  // a picoampere moves by a few microvolts (a bridge floating on 1 MOhm references) is settled by
  // the polishing steps, not worth a run of its own at every sweep point.
  const double margin = rounding ? 1.0 : tuning.loose.margin;
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
      if (probe->AnalyzeBorrowed(mna.size(), mna.col_ptr(), mna.row_index()) != LinearStatus::kOk) {
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
  internal::DisjointSet tied(nodes);
  const auto find = [&](int n) { return tied.Find(n); };
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
    const double g = internal::ConductanceAt(e, r);
    if (!(g > 0.0)) return;
    const bool ties = g * std::min(tolerance(e.node_a), tolerance(e.node_b)) >=
                      std::max(uncertainty(e.node_a), uncertainty(e.node_b));
    if (ties) tied.Join(e.node_a, e.node_b);
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
  // More steps than a rung of the ladder, and the relative part of the residual test
  // tightened too (LooseNodeTuning::RunOptions).
  SolverOptions tight = tuning.loose.RunOptions(options);
  // Which nodes are loose is still judged against the solve's own voltage tolerance.
  const auto judged = [&] {
    SolverOptions o = tight;
    o.rel_tol = options.rel_tol;
    return o;
  };
  saved = x;
  bool kept = false;
  // Where plain Newton does not settle a monotone network's loose nodes (a string of
  // junctions it leaves volts from their balance), the potential method from the same
  // point gets the usual step limit.
  const bool monotone = !non_monotone && !unbounded;
  // The scale is first-order: on an exponential it can fall short, and a loose node
  // whose every current is below the scaled tolerance would still be exempt from the
  // update test as faint. So the tolerance also goes below a tenth of the loose nodes'
  // own largest currents, and the test is repeated after each run (LooseNodeTuning::rounds).
  for (int round = 0; round < tuning.loose.rounds && !loose.empty(); ++round) {
    const auto flow = mna.flow();  // at x: LooseNodes assembled it
    double weakest = HUGE_VAL;
    for (int u : loose) {
      const double f = flow[static_cast<size_t>(u)];
      if (f > 0.0) weakest = std::min(weakest, f);
    }
    tight.abs_current_tol = std::max(std::min(0.1 * scale * tight.abs_current_tol, 0.1 * weakest),
                                     tuning.loose.current_floor);
    // Only LooseNodes reads the spread, and it sizes it again: a cold solve (which sizes
    // every workspace anyway) does not hold it beside the run's own vectors.
    if (!warm()) std::vector<double>().swap(spread);
    NewtonOutcome out =
        newton.Run(AssemblyAids{}, "newton (loose nodes)", x, trace_on ? &trace : nullptr, tight);
    s->newton_steps += out.steps;
    factors_exact = newton.exact_factors();
    if (out.exit != NewtonExit::kConverged && monotone) {
      x = saved;
      SolverOptions fallback = tight;
      fallback.max_newton_steps = options.max_newton_steps;
      potential.set_stiff_conductance(
          internal::StiffJunctionConductance(*circuit, tuning.potential.stiff_factor));
      out = potential.Run(x, trace_on ? &trace : nullptr, fallback);
      s->newton_steps += out.steps;
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

}  // namespace knee
