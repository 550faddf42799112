// KLU behind the small interface of klu_solver.h.
#include "klu_solver.h"

#include <fmt/format.h>
#include <klu.h>

#include <utility>

#include "check.h"
#include "pivot_growth.h"

namespace knee::internal {

// Heap-held so that the address of `common` (which KLU keeps using) survives moves.
struct KluSolver::Handles {
  klu_common common{};
  klu_symbolic* symbolic = nullptr;
  klu_numeric* numeric = nullptr;
  // klu_rcond of `numeric`, or -1 while it has not been computed for these factors.
  double rcond = -1.0;

  Handles() { klu_defaults(&common); }
  ~Handles() {
    FreeNumeric();
    if (symbolic != nullptr) klu_free_symbolic(&symbolic, &common);
  }
  void FreeNumeric() {
    if (numeric != nullptr) klu_free_numeric(&numeric, &common);
    rcond = -1.0;
  }
};

KluSolver::KluSolver() : handles_(std::make_unique<Handles>()) {}
KluSolver::~KluSolver() = default;
KluSolver::KluSolver(KluSolver&& other) noexcept = default;
KluSolver& KluSolver::operator=(KluSolver&& other) noexcept = default;

// The one place where KLU's status becomes recoverable or fatal.
LinearStatus KluSolver::Classify(int status, const char* call) {
  switch (status) {
    case KLU_OK:
      return LinearStatus::kOk;
    case KLU_SINGULAR:
      message_ = fmt::format("{}: matrix is singular (numerical rank {} of {})", call,
                             handles_->common.numerical_rank, col_ptr_.size() - 1);
      return LinearStatus::kSingular;
    case KLU_OUT_OF_MEMORY:
      message_ = fmt::format("{}: out of memory", call);
      return LinearStatus::kFatal;
    case KLU_INVALID:
      message_ = fmt::format("{}: invalid matrix or call", call);
      return LinearStatus::kFatal;
    case KLU_TOO_LARGE:
      message_ = fmt::format("{}: matrix too large (integer overflow)", call);
      return LinearStatus::kFatal;
    default:
      message_ = fmt::format("{}: unknown status {}", call, status);
      return LinearStatus::kFatal;
  }
}

LinearStatus KluSolver::Analyze(int n, std::span<const int> col_ptr,
                                std::span<const int> row_index) {
  col_ptr_copy_.assign(col_ptr.begin(), col_ptr.end());
  row_index_copy_.assign(row_index.begin(), row_index.end());
  return Order(n, col_ptr_copy_, row_index_copy_);
}

LinearStatus KluSolver::AnalyzeBorrowed(int n, std::span<const int> col_ptr,
                                        std::span<const int> row_index) {
  std::vector<int>().swap(col_ptr_copy_);
  std::vector<int>().swap(row_index_copy_);
  return Order(n, col_ptr, row_index);
}

LinearStatus KluSolver::Order(int n, std::span<const int> col_ptr, std::span<const int> row_index) {
  KNEE_CHECK(static_cast<int>(col_ptr.size()) == n + 1);
  col_ptr_ = col_ptr;
  row_index_ = row_index;
  Handles& h = *handles_;
  h.FreeNumeric();
  if (h.symbolic != nullptr) klu_free_symbolic(&h.symbolic, &h.common);
  h.symbolic = klu_analyze(n, ColPtr(), RowIndex(), &h.common);
  if (h.symbolic == nullptr) {
    const LinearStatus s = Classify(h.common.status, "klu_analyze");
    return s == LinearStatus::kOk ? LinearStatus::kFatal : s;
  }
  return LinearStatus::kOk;
}

LinearStatus KluSolver::Factor(std::span<const double> values) {
  Handles& h = *handles_;
  KNEE_CHECK(h.symbolic != nullptr && values.size() == row_index_.size());
  h.FreeNumeric();
  ++full_factorizations_;
  // KLU does not modify the arrays; its C interface is not const-qualified.
  h.numeric =
      klu_factor(ColPtr(), RowIndex(), const_cast<double*>(values.data()), h.symbolic, &h.common);
  if (h.numeric == nullptr || h.common.status != KLU_OK) {
    h.FreeNumeric();  // an incomplete factorisation must not be refactored later
    const LinearStatus s = Classify(h.common.status, "klu_factor");
    return s == LinearStatus::kOk ? LinearStatus::kFatal : s;
  }
  return LinearStatus::kOk;
}

LinearStatus KluSolver::Refactor(std::span<const double> values) {
  Handles& h = *handles_;
  if (h.numeric == nullptr) return Factor(values);
  KNEE_CHECK(values.size() == row_index_.size());
  h.rcond = -1.0;
  const int ok = klu_refactor(ColPtr(), RowIndex(), const_cast<double*>(values.data()), h.symbolic,
                              h.numeric, &h.common);
  if (ok == 0 || h.common.status != KLU_OK) return Factor(values);
  // Old pivots gone bad show as a zero pivot or as large pivot growth. (A small
  // min/max ratio of U's diagonal alone is no reason: diode networks legitimately mix
  // conductances from 1e-25 S to 1e3 S, and fresh pivots would not change that.)
  // Both checks are klu_rcond's and klu_rgrowth's, decided in one pass (pivot_growth.h);
  // klu_rgrowth itself only where the growth is within rounding of the floor.
  const PivotCheck check = CheckPivots(ColPtr(), RowIndex(), values.data(), *h.symbolic, *h.numeric,
                                       kRefactorGrowthFloor);
  const bool growth_ok = check.growth == GrowthVerdict::kAtLeast ||
                         (check.growth == GrowthVerdict::kTooClose &&
                          klu_rgrowth(ColPtr(), RowIndex(), const_cast<double*>(values.data()),
                                      h.symbolic, h.numeric, &h.common) != 0 &&
                          h.common.rgrowth >= kRefactorGrowthFloor);
  if (check.rcond == 0.0 || !growth_ok) return Factor(values);
  h.rcond = check.rcond;
  return LinearStatus::kOk;
}

// Computed once per set of factors: the Newton step asks for it after every refactor,
// which has just computed it for its own check.
double KluSolver::rcond() {
  Handles& h = *handles_;
  if (h.numeric == nullptr) return 0.0;
  if (h.rcond >= 0.0) return h.rcond;
  if (klu_rcond(h.symbolic, h.numeric, &h.common) == 0) return 0.0;
  h.rcond = h.common.rcond;
  return h.rcond;
}

LinearStatus KluSolver::Solve(std::span<double> rhs) {
  Handles& h = *handles_;
  KNEE_CHECK(h.numeric != nullptr && rhs.size() + 1 == col_ptr_.size());
  if (klu_solve(h.symbolic, h.numeric, static_cast<int>(rhs.size()), 1, rhs.data(), &h.common) ==
      0) {
    const LinearStatus s = Classify(h.common.status, "klu_solve");
    return s == LinearStatus::kOk ? LinearStatus::kFatal : s;
  }
  return LinearStatus::kOk;
}

bool KluSolver::has_factors() const { return handles_->numeric != nullptr; }

LinearStatus KluSolver::SolveTransposed(std::span<double> rhs) {
  Handles& h = *handles_;
  KNEE_CHECK(h.numeric != nullptr && rhs.size() + 1 == col_ptr_.size());
  if (klu_tsolve(h.symbolic, h.numeric, static_cast<int>(rhs.size()), 1, rhs.data(), &h.common) ==
      0) {
    const LinearStatus s = Classify(h.common.status, "klu_tsolve");
    return s == LinearStatus::kOk ? LinearStatus::kFatal : s;
  }
  return LinearStatus::kOk;
}

}  // namespace knee::internal
