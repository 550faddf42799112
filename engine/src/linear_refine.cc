// GMRES (Y. Saad and M. H. Schultz, SIAM J. Sci. Stat. Comput. 7(3), 1986) with right
// preconditioning, modified Gram-Schmidt applied twice and Givens rotations (Saad,
// "Iterative Methods for Sparse Linear Systems", 2nd ed., ch. 6 and 9, recalled from
// memory). The operator is the Jacobian as a sum of device terms, the preconditioner the
// KLU factors of the assembled matrix: the two differ only where the assembled sums
// rounded away a small conductance, a low-rank difference that GMRES removes in a few
// iterations.
#include "linear_refine.h"

#include <algorithm>
#include <cmath>

namespace knee::internal {
namespace {

double Dot(std::span<const double> a, std::span<const double> b) {
  double s = 0.0;
  for (size_t i = 0; i < a.size(); ++i) s += a[i] * b[i];
  return s;
}

}  // namespace

double StepRefiner::WeightedResidual(const MnaSystem& mna, std::span<const double> b,
                                     std::span<const double> tolerance, std::span<const double> d) {
  mna.MultiplyJacobian(d, w_);
  double worst = 0.0;
  for (size_t i = 0; i < r_.size(); ++i) {
    r_[i] = (b[i] - w_[i]) / tolerance[i];
    worst = std::max(worst, std::fabs(r_[i]));
  }
  return std::isfinite(worst) ? worst : HUGE_VAL;
}

// The buffers for n unknowns; the Krylov basis only once a step needs refining.
void StepRefiner::Size(size_t n) {
  if (r_.size() != n) {
    r_.assign(n, 0.0);
    w_.assign(n, 0.0);
    z_.assign(n, 0.0);
    best_.assign(n, 0.0);
  }
}

void StepRefiner::SizeBasis(size_t n) {
  const size_t m = kKrylovSize;
  if (basis_.size() != (m + 1) * n) {
    basis_.assign((m + 1) * n, 0.0);
    hessenberg_.assign((m + 1) * m, 0.0);
    givens_cos_.assign(m, 0.0);
    givens_sin_.assign(m, 0.0);
    rhs_.assign(m + 1, 0.0);
    y_.assign(m, 0.0);
  }
}

// z = M^-1 W^-1 u: unweight, then apply the factors.
bool StepRefiner::Precondition(LinearSolver& klu, std::span<const double> tolerance,
                               std::span<const double> u) {
  for (size_t i = 0; i < z_.size(); ++i) z_[i] = u[i] * tolerance[i];
  return klu.Solve(z_) == LinearStatus::kOk;
}

// One restart's Arnoldi process from v(0) = r / beta, with the Givens rotations that keep
// the least-squares residual in rhs_; returns the basis size k (0 with *failed when the
// preconditioner fails).
size_t StepRefiner::Arnoldi(const MnaSystem& mna, LinearSolver& klu,
                            std::span<const double> tolerance, bool* failed) {
  const size_t n = r_.size();
  const size_t m = kKrylovSize;
  const auto v = [&](size_t j) { return std::span<double>(basis_).subspan(j * n, n); };
  const auto h = [&](size_t i, size_t j) -> double& { return hessenberg_[j * (m + 1) + i]; };
  size_t k = 0;
  for (size_t j = 0; j < m; ++j) {
    if (!Precondition(klu, tolerance, v(j))) {
      *failed = true;
      break;
    }
    mna.MultiplyJacobian(z_, w_);
    for (size_t i = 0; i < n; ++i) w_[i] /= tolerance[i];
    for (size_t i = 0; i <= j; ++i) h(i, j) = 0.0;
    for (int pass = 0; pass < 2; ++pass) {
      for (size_t i = 0; i <= j; ++i) {
        const double c = Dot(w_, v(i));
        h(i, j) += c;
        for (size_t t = 0; t < n; ++t) w_[t] -= c * v(i)[t];
      }
    }
    const double norm = std::sqrt(Dot(w_, w_));
    h(j + 1, j) = norm;
    if (norm > 0.0) {
      for (size_t t = 0; t < n; ++t) v(j + 1)[t] = w_[t] / norm;
    }
    for (size_t i = 0; i < j; ++i) {
      const double a = h(i, j), c = h(i + 1, j);
      h(i, j) = givens_cos_[i] * a + givens_sin_[i] * c;
      h(i + 1, j) = -givens_sin_[i] * a + givens_cos_[i] * c;
    }
    const double radius = std::hypot(h(j, j), h(j + 1, j));
    givens_cos_[j] = radius > 0.0 ? h(j, j) / radius : 1.0;
    givens_sin_[j] = radius > 0.0 ? h(j + 1, j) / radius : 0.0;
    h(j, j) = radius;
    h(j + 1, j) = 0.0;
    rhs_[j + 1] = -givens_sin_[j] * rhs_[j];
    rhs_[j] = givens_cos_[j] * rhs_[j];
    k = j + 1;
    // The 2-norm bounds the largest entry: stop once it is below the target.
    if (std::fabs(rhs_[j + 1]) <= 0.5 * kTarget || norm == 0.0) break;
  }
  return k;
}

// w_ = the basis combination y of the least-squares solution over the first k vectors.
void StepRefiner::Combine(size_t k) {
  const size_t n = r_.size();
  const size_t m = kKrylovSize;
  const auto v = [&](size_t j) { return std::span<double>(basis_).subspan(j * n, n); };
  const auto h = [&](size_t i, size_t j) -> double& { return hessenberg_[j * (m + 1) + i]; };
  for (size_t i = k; i-- > 0;) {
    double s = rhs_[i];
    for (size_t t = i + 1; t < k; ++t) s -= h(i, t) * y_[t];
    y_[i] = h(i, i) != 0.0 ? s / h(i, i) : 0.0;
  }
  std::fill(w_.begin(), w_.end(), 0.0);
  for (size_t i = 0; i < k; ++i) {
    for (size_t t = 0; t < n; ++t) w_[t] += y_[i] * v(i)[t];
  }
}

double StepRefiner::Refine(const MnaSystem& mna, LinearSolver& klu, std::span<const double> b,
                           std::span<const double> tolerance, std::span<double> d) {
  const size_t n = d.size();
  Size(n);
  double worst = WeightedResidual(mna, b, tolerance, d);
  if (worst <= kTarget) return worst;
  ++refinements_;
  SizeBasis(n);
  std::copy(d.begin(), d.end(), best_.begin());
  double best_worst = worst;
  for (int restart = 0; restart < kRestarts && worst > kTarget; ++restart) {
    const double beta = std::sqrt(Dot(r_, r_));
    if (!(beta > 0.0) || !std::isfinite(beta)) break;
    for (size_t i = 0; i < n; ++i) basis_[i] = r_[i] / beta;
    std::fill(rhs_.begin(), rhs_.end(), 0.0);
    rhs_[0] = beta;
    bool failed = false;
    const size_t k = Arnoldi(mna, klu, tolerance, &failed);
    if (failed || k == 0) break;
    Combine(k);
    if (!Precondition(klu, tolerance, w_)) break;
    for (size_t i = 0; i < n; ++i) d[i] += z_[i];
    worst = WeightedResidual(mna, b, tolerance, d);
    if (worst < best_worst) {
      best_worst = worst;
      std::copy(d.begin(), d.end(), best_.begin());
    }
  }
  std::copy(best_.begin(), best_.end(), d.begin());
  return best_worst;
}

}  // namespace knee::internal
