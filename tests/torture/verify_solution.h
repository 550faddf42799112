// Independent verification of a reported solution: every node's KCL sum recomputed from
// the element currents, and every device's own equation recomputed from its terminal
// voltages (the diode by the contract's law, netlist-format.md "Diode parameters",
// written out again here and not taken from the engine).
#pragma once

#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/solver.h"

namespace knee::torture {

struct VerifyTolerances {
  double abs_current = 1e-9;  // A: like SolverOptions::verify_current_tol
  double rel = 1e-6;          // of the largest magnitude in the balance, like rel_tol
  double abs_voltage = 1e-6;  // V: like SolverOptions::abs_voltage_tol
};

struct Verification {
  bool ok = true;
  double max_kcl_residual = 0;  // A, over every circuit node
  std::string problem;          // the first equation that failed, with its numbers
};

Verification VerifySolution(const Circuit& circuit, const Solution& solution,
                            const VerifyTolerances& tol = {});

// How precisely the network's equations fix each node voltage in double precision: the
// first-order bound |J^-1| a (componentwise, J the dense modified-nodal Jacobian at the
// solution from the contract's laws, a the rounding of every equation: 16 eps times the
// sum of its terms, as in VerifySolution). Two solvers can only be expected to agree at a
// node to within this (plus their own tolerances). Index: circuit node (gnd: 0). Computed
// with Eigen's dense LU, independently of the engine; for the small torture networks.
std::vector<double> RoundOffResolution(const Circuit& circuit, const Solution& solution);

// The contract's diode current at junction voltage vj (no overflow aid: exact law).
double ContractDiodeCurrent(const DiodeModel& model, double area, double temp_celsius, double vj);

}  // namespace knee::torture
