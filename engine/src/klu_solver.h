// A small move-only owner of KLU's symbolic and numeric objects: analyse a pattern once,
// factor or refactor values, solve.
#pragma once

#include <memory>
#include <span>
#include <string>
#include <vector>

#include "linear_solver.h"

namespace knee::internal {

class KluSolver final : public LinearSolver {
 public:
  KluSolver();
  ~KluSolver() override;
  KluSolver(KluSolver&& other) noexcept;
  KluSolver& operator=(KluSolver&& other) noexcept;
  KluSolver(const KluSolver&) = delete;
  KluSolver& operator=(const KluSolver&) = delete;

  // Orders the n x n CSC pattern (copied). Must precede Factor.
  LinearStatus Analyze(int n, std::span<const int> col_ptr,
                       std::span<const int> row_index) override;
  // Full factorisation with fresh pivots.
  LinearStatus Factor(std::span<const double> values) override;
  // Reuses the pivots of the last full factorisation; falls back to Factor when KLU
  // reports trouble, a pivot is zero, or the reciprocal pivot growth (klu_rgrowth) is
  // below kRefactorGrowthFloor.
  LinearStatus Refactor(std::span<const double> values) override;
  // Solves A x = b in place.
  LinearStatus Solve(std::span<double> rhs) override;
  // Whether factors are held (a Factor or Refactor succeeded since the last Analyze).
  bool has_factors() const;
  // Solves A^T x = b in place with the same factors (klu_tsolve): the adjoint system.
  LinearStatus SolveTransposed(std::span<double> rhs);

  // KLU's cheap reciprocal condition estimate of the current factors (min/max |U_ii|);
  // 0 when there are none.
  double rcond() override;

  // Why the last call did not return kOk, with KLU's status and numbers.
  const std::string& message() const override { return message_; }
  int full_factorizations() const { return full_factorizations_; }

  static constexpr double kRefactorGrowthFloor = 1e-10;

 private:
  struct Handles;
  LinearStatus Classify(int status, const char* call);
  std::unique_ptr<Handles> handles_;
  std::vector<int> col_ptr_, row_index_;
  std::string message_;
  int full_factorizations_ = 0;
};

}  // namespace knee::internal
