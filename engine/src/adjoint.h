// The adjoint solve of knee/sensitivity.h on the solver's MNA system: the right-hand
// side dQ/dx of a quantity, the transposed solve J^T lambda = dQ/dx with the factors the
// solve left (refined against the exact Jacobian), and the devices' -lambda^T dF/dp.
#pragma once

#include <optional>
#include <span>
#include <string>
#include <vector>

#include "klu_solver.h"
#include "knee/sensitivity.h"
#include "mna.h"

namespace knee::internal {

// Buffers kept between calls (a sweep differentiates at every point).
struct AdjointWorkspace {
  std::vector<double> rhs, lambda, residual, correction;
  // Fresh factors of the exact Jacobian at x, made when the solve's own are not of it (or
  // do not refine to it); never the solve's KluSolver, whose pivots a sweep's later
  // points reuse.
  std::optional<KluSolver> own;
  std::vector<int> col_ptr, row_index;  // the pattern `own` analysed
};

// At most this many refinement steps of lambda against the exact Jacobian product.
inline constexpr int kAdjointRefinements = 4;

// Fills *gradient with d(sum_k weight_k q_k)/dp for every number p of `circuit` at the
// solution x (plain node voltages and branch currents, as the solver keeps them). `klu`
// holds factors of the Jacobian at or next to x when factors_exact. "" or a message.
std::string ComputeSensitivity(const Circuit& circuit, MnaSystem& mna, KluSolver& klu,
                               bool factors_exact, std::span<const double> x,
                               std::span<const WeightedQuantity> quantity,
                               AdjointWorkspace& workspace, CircuitGradient* gradient);

}  // namespace knee::internal
