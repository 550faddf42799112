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
  // The same without the copy: every later factorisation reads the caller's arrays, which
  // must stay alive and unchanged until the next Analyze or the solver's end (the MNA
  // system's pattern, for factors that a rebuilt system analyses again; a million-unknown
  // pattern is 16 MB).
  LinearStatus AnalyzeBorrowed(int n, std::span<const int> col_ptr, std::span<const int> row_index);
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
  LinearStatus Order(int n, std::span<const int> col_ptr, std::span<const int> row_index);
  // KLU does not modify the pattern; its C interface is not const-qualified.
  int* ColPtr() const { return const_cast<int*>(col_ptr_.data()); }
  int* RowIndex() const { return const_cast<int*>(row_index_.data()); }
  std::unique_ptr<Handles> handles_;
  std::vector<int> col_ptr_copy_, row_index_copy_;  // Analyze's copy (empty when borrowed)
  std::span<const int> col_ptr_, row_index_;        // the pattern analysed
  std::string message_;
  int full_factorizations_ = 0;
};

}  // namespace knee::internal
