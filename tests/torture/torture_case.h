// One torture case: generate, check the topology, solve, verify independently.
#pragma once

#include <cstdint>
#include <string>

#include "knee/solver.h"
#include "torture/network_generator.h"

namespace knee::torture {

struct CaseResult {
  uint64_t seed = 0;
  bool ok = false;         // converged, and the solution passed VerifySolution
  bool converged = false;  // the solver reported a usable answer (knee would exit 0)
  std::string status;      // the solver's status (ToString)
  std::string problem;     // why not
  int newton_steps = 0;
  std::string aids;  // comma separated, "" for none
  double max_kcl_residual = 0;
  int elements = 0;
  int undetermined_nodes = 0;  // nodes the solver reported undetermined
};

CaseResult RunCase(uint64_t seed, const GeneratorOptions& options,
                   const SolverOptions& solver_options = {});

}  // namespace knee::torture
