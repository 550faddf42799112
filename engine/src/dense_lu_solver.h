// A dense LU with full pivoting behind the LinearSolver interface (Eigen's FullPivLU):
// slow and exact as LU goes, the oracle the tests compare the sparse solver with.
#pragma once

#include <memory>
#include <span>
#include <string>
#include <vector>

#include "linear_solver.h"

namespace knee::internal {

class DenseLuSolver final : public LinearSolver {
 public:
  DenseLuSolver();
  ~DenseLuSolver() override;
  LinearStatus Analyze(int n, std::span<const int> col_ptr,
                       std::span<const int> row_index) override;
  LinearStatus Factor(std::span<const double> values) override;
  LinearStatus Refactor(std::span<const double> values) override { return Factor(values); }
  LinearStatus Solve(std::span<double> rhs) override;
  double rcond() override;
  const std::string& message() const override { return message_; }

 private:
  int n_ = 0;
  std::vector<int> col_ptr_, row_index_;
  struct Factors;  // Eigen's FullPivLU, kept out of this header
  std::unique_ptr<Factors> lu_;
  bool factored_ = false;
  std::string message_;
};

}  // namespace knee::internal
