// Fuzz target: parse, elaborate, CheckTopology and, for a circuit that passes, BiasSolver
// with a small step budget (so no input can make it run long). Oracle beyond "no crash":
// a solution reported as converged has finite numbers and a finite residual.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "knee/netlist.h"
#include "knee/solver.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  knee::Result<knee::Netlist> netlist = knee::ParseNetlist(text, "fuzz.knee");
  if (!netlist) return 0;
  knee::Result<knee::Design> design = knee::Elaborate(*netlist, {});
  if (!design) return 0;
  const knee::Circuit& circuit = design->circuit;
  if (!knee::CheckTopology(circuit).empty()) return 0;
  if (circuit.elements.size() > 200) return 0;  // keep each run short
  knee::SolverOptions options;
  options.max_newton_steps = 25;
  options.source_steps = 4;
  knee::Result<std::unique_ptr<knee::BiasSolver>> solver =
      knee::BiasSolver::Create(circuit, options);
  if (!solver) return 0;
  knee::Solution solution;
  const knee::SolveSummary summary = (*solver)->Solve(&solution);
  if (summary.status == knee::SolveStatus::kConverged) {
    if (!std::isfinite(summary.max_kcl_residual)) __builtin_trap();
    for (double v : solution.node_voltage) {
      if (!std::isfinite(v)) __builtin_trap();
    }
    for (double i : solution.element_current) {
      if (!std::isfinite(i)) __builtin_trap();
    }
  }
  return 0;
}
