// Newton steps that stay accurate where the factorised Jacobian is not: GMRES on the
// device-by-device Jacobian product, preconditioned by the KLU factors.
#pragma once

#include <span>
#include <vector>

#include "linear_solver.h"
#include "mna.h"

namespace knee::internal {

class StepRefiner {
 public:
  // Below this reciprocal condition estimate of the factors (KLU's min/max |U_ii|) a
  // step is checked against the device-by-device product and refined if needed.
  static constexpr double kCheckBelowRcond = 1e-12;
  // A step is accurate enough when every row's linear residual |b - J d|_r is at most
  // this fraction of `tolerance[r]` (the row's residual tolerance).
  static constexpr double kTarget = 0.1;
  static constexpr int kKrylovSize = 24;  // basis vectors per restart
  static constexpr int kRestarts = 4;

  // Improves d toward J d = b, J the Jacobian of the last assembly of `mna` (as a
  // device-by-device product) and `klu` holding factors of (an approximation of) it.
  // Rows are weighted by 1/tolerance[r]. Returns the largest weighted residual left
  // (d is never made worse than it came in).
  double Refine(const MnaSystem& mna, LinearSolver& klu, std::span<const double> b,
                std::span<const double> tolerance, std::span<double> d);
  int refinements() const { return refinements_; }

 private:
  // r = (b - J d) / tolerance; returns max |r_i|.
  double WeightedResidual(const MnaSystem& mna, std::span<const double> b,
                          std::span<const double> tolerance, std::span<const double> d);
  void Size(size_t n);
  void SizeBasis(size_t n);
  bool Precondition(LinearSolver& klu, std::span<const double> tolerance,
                    std::span<const double> u);
  size_t Arnoldi(const MnaSystem& mna, LinearSolver& klu, std::span<const double> tolerance,
                 bool* failed);
  void Combine(size_t k);

  std::vector<double> basis_;  // (kKrylovSize + 1) vectors, allocated on first use
  std::vector<double> hessenberg_, givens_cos_, givens_sin_, rhs_, y_;
  std::vector<double> r_, w_, z_, best_;
  int refinements_ = 0;
};

}  // namespace knee::internal
