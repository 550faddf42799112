#include "torture/torture_case.h"

#include <fmt/format.h>

#include "torture/verify_solution.h"

namespace knee::torture {

CaseResult RunCase(uint64_t seed, const GeneratorOptions& options,
                   const SolverOptions& solver_options) {
  CaseResult r;
  r.seed = seed;
  const Circuit circuit = GenerateNetwork(seed, options);
  r.elements = static_cast<int>(circuit.elements.size());
  const std::vector<Diagnostic> topology = CheckTopology(circuit);
  if (!topology.empty()) {
    r.problem = "generator drew an unsolvable circuit: " + topology.front().message;
    return r;
  }
  Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit, solver_options);
  if (!solver) {
    r.problem = "solver setup: " + solver.errors().front().message;
    return r;
  }
  Solution solution;
  const SolveSummary summary = (*solver)->Solve(&solution);
  r.newton_steps = summary.newton_steps;
  r.undetermined_nodes = static_cast<int>(summary.undetermined_nodes.size());
  r.aids = fmt::format("{}", fmt::join(summary.aids, ","));
  r.status = ToString(summary.status);
  r.converged = summary.status == SolveStatus::kConverged;
  if (summary.status != SolveStatus::kConverged) {
    r.problem = fmt::format("{} after {} steps: {}", ToString(summary.status), summary.newton_steps,
                            summary.detail);
    return r;
  }
  const Verification v = VerifySolution(circuit, solution);
  r.max_kcl_residual = v.max_kcl_residual;
  if (!v.ok) {
    r.problem = "independent verification: " + v.problem;
    return r;
  }
  r.ok = true;
  return r;
}

}  // namespace knee::torture
