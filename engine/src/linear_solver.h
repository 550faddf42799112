// The linear solver behind the Newton steps: one interface, so that the solvers do not
// depend on which factorisation serves them. KluSolver (klu_solver.h) is the one the
// engine uses; DenseLuSolver (dense_lu_solver.h) is a dense LU with full pivoting, the
// oracle the tests compare it with.
#pragma once

#include <span>
#include <string>

namespace knee::internal {

// Recoverable: the matrix is singular for these values (an aid may help, or a node
// floats). Fatal: out of memory or invalid input; nothing to retry.
enum class LinearStatus { kOk, kSingular, kFatal };

class LinearSolver {
 public:
  virtual ~LinearSolver() = default;
  // Orders the n x n CSC pattern (copied). Must precede Factor.
  virtual LinearStatus Analyze(int n, std::span<const int> col_ptr,
                               std::span<const int> row_index) = 0;
  // Full factorisation of the pattern's values with fresh pivots.
  virtual LinearStatus Factor(std::span<const double> values) = 0;
  // A factorisation that may reuse the last one's pivots.
  virtual LinearStatus Refactor(std::span<const double> values) = 0;
  // Solves A x = b in place.
  virtual LinearStatus Solve(std::span<double> rhs) = 0;
  // A reciprocal condition estimate of the current factors; 0 when there are none.
  virtual double rcond() = 0;
  // Why the last call did not return kOk.
  virtual const std::string& message() const = 0;
};

}  // namespace knee::internal
