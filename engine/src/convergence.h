// The convergence tests both solvers share: every exit of a run is one of NewtonExit,
// decided by a named test (CheckUpdate, CheckResidual) that records its worst entry, and
// the estimates of how far round-off and the tolerances move a step (docs/solver.md,
// "Convergence").
#pragma once

#include <algorithm>
#include <cmath>
#include <span>
#include <string>
#include <vector>

#include "knee/solver.h"
#include "linear_solver.h"
#include "mna.h"

namespace knee::internal {

// max |v_i| over the first `count` entries.
inline double MaxAbs(std::span<const double> v, size_t count) {
  double m = 0.0;
  for (size_t i = 0; i < count; ++i) m = std::max(m, std::fabs(v[i]));
  return m;
}

enum class NewtonExit {
  kConverged,  // both tests passed; x is the answer for these aids
  kStepLimit,  // max_newton_steps used up
  kSingular,   // the Jacobian was singular
  kNonFinite,  // a device or the update produced a non-finite value
  kFatal,      // the linear solver failed for good (memory, invalid input)
};

// The worst entry of a tolerance test: the index where |value| / bound is largest.
struct ToleranceCheck {
  int index = -1;
  double value = 0.0;  // |dx| or |F| there
  double bound = 0.0;  // its tolerance
  bool passed() const { return index < 0 || value <= bound; }
  // |value| / bound, 0 when nothing was tested.
  double ratio() const { return index < 0 ? 0.0 : value / bound; }
};

// The numbers behind a converged run's detail ("converged in N steps: worst |dx| ...").
// Kept as numbers so that the text is made only where it is read
// (NewtonSolver::Describe): a sweep shows no detail for its converged points.
struct ConvergedNote {
  int steps = 0;  // Newton steps before the accepted point
  ToleranceCheck update, residual;
  bool step_taken = true;  // false: the last step was computed but not applied
};

struct NewtonOutcome {
  NewtonExit exit = NewtonExit::kStepLimit;
  int steps = 0;
  // Why it stopped, with the numbers; empty for a converged run whose solver was told
  // not to describe converged runs (then `note` holds the numbers).
  std::string detail;
  ConvergedNote note;  // set when exit == kConverged
};

// |dx_u| <= abs_voltage_tol + rel_tol*|x_u| (abs_current_tol for current unknowns), plus
// kNoiseFactor*|noise_u| when `noise` is given: the part of a step that the residual's
// round-off alone would cause (NewtonSolver::NoiseFloor). With exempt_loose, node
// unknowns whose every current is below abs_current_tol are not tested.
inline constexpr double kNoiseFactor = 4.0;
// "no convergence in N steps: last |dx| at ..., worst residual at ...": why a run used
// up its steps, with the last update's worst check and the residual's at the last point.
std::string StepLimitDetail(const MnaSystem& mna, const SolverOptions& options,
                            const ToleranceCheck& update);

// |J^-1 a| in node voltages, a the round-off allowance of every row, with the factors
// `klu` holds: how far the residual's rounding alone moves a step. False if the solve
// fails.
bool RoundingNoise(const MnaSystem& mna, LinearSolver& klu, std::span<double> noise);
// |J^-1 t| in node voltages, t_r = abs_current_tol on every KCL row: how far currents of
// the size of the residual's absolute tolerance move a node (loose_nodes.cc, LooseNodes). The
// relative part rel_tol*flow_r is left out: mapped through J^-1 it adds up the tolerances
// of every amp-level row onto a common mode held by megohms (a bridge floating on 1 MOhm
// references moved "0.75 V"), although those rows' errors are a balance of large
// currents, not an uncertainty of 0.4 uA each.
bool ToleranceSpread(const MnaSystem& mna, const SolverOptions& options, LinearSolver& klu,
                     std::span<double> spread);

ToleranceCheck CheckUpdate(const MnaSystem& mna, const SolverOptions& options,
                           std::span<const double> dx, std::span<const double> x,
                           std::span<const double> noise = {}, bool exempt_loose = true);
// KCL rows: |F_r| <= abs_current_tol + rel_tol*flow_r; branch rows: |F_r| <= abs_voltage_tol;
// both plus the round-off allowance of row r.
ToleranceCheck CheckResidual(const MnaSystem& mna, const SolverOptions& options);
// The sum over the tests of CheckResidual of (|F_r| / bound_r)^2: a smooth measure of
// how far the residual is from passing. A Newton direction d = -J^-1 F lowers any fixed
// weighted sum of squares of F at the rate 2 * that sum.
double ResidualMerit(const MnaSystem& mna, const SolverOptions& options);

// "NAME (last change D)" for every unknown whose last update `dx` at `x` broke the update
// tolerance of CheckUpdate: what a failed run reports as still moving.
std::vector<std::string> UnsettledUnknowns(const MnaSystem& mna, const SolverOptions& options,
                                           std::span<const double> dx, std::span<const double> x);

}  // namespace knee::internal
