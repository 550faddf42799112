// DenseLuSolver (dense_lu_solver.h).
#include "dense_lu_solver.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <cmath>

namespace knee::internal {

struct DenseLuSolver::Factors {
  Eigen::FullPivLU<Eigen::MatrixXd> lu;
};

DenseLuSolver::DenseLuSolver() : lu_(std::make_unique<Factors>()) {}
DenseLuSolver::~DenseLuSolver() = default;

LinearStatus DenseLuSolver::Analyze(int n, std::span<const int> col_ptr,
                                    std::span<const int> row_index) {
  n_ = n;
  col_ptr_.assign(col_ptr.begin(), col_ptr.end());
  row_index_.assign(row_index.begin(), row_index.end());
  factored_ = false;
  return LinearStatus::kOk;
}

LinearStatus DenseLuSolver::Factor(std::span<const double> values) {
  factored_ = false;
  if (values.size() != row_index_.size()) {
    message_ = "the values do not fit the analysed pattern";
    return LinearStatus::kFatal;
  }
  Eigen::MatrixXd a = Eigen::MatrixXd::Zero(n_, n_);
  for (int col = 0; col < n_; ++col) {
    for (int p = col_ptr_[static_cast<size_t>(col)]; p < col_ptr_[static_cast<size_t>(col) + 1];
         ++p) {
      a(row_index_[static_cast<size_t>(p)], col) += values[static_cast<size_t>(p)];
    }
  }
  if (!a.allFinite()) {
    message_ = "the matrix has a non-finite entry";
    return LinearStatus::kFatal;
  }
  lu_->lu.compute(a);
  if (!lu_->lu.isInvertible()) {
    message_ = fmt::format("the {}x{} matrix has rank {}", n_, n_, lu_->lu.rank());
    return LinearStatus::kSingular;
  }
  factored_ = true;
  return LinearStatus::kOk;
}

LinearStatus DenseLuSolver::Solve(std::span<double> rhs) {
  if (!factored_ || static_cast<int>(rhs.size()) != n_) {
    message_ = "no factors of this size";
    return LinearStatus::kFatal;
  }
  const Eigen::Map<const Eigen::VectorXd> b(rhs.data(), n_);
  const Eigen::VectorXd x = lu_->lu.solve(b);
  for (int i = 0; i < n_; ++i) rhs[static_cast<size_t>(i)] = x(i);
  return LinearStatus::kOk;
}

double DenseLuSolver::rcond() { return factored_ ? lu_->lu.rcond() : 0.0; }

}  // namespace knee::internal
