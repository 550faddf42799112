// One Newton-Raphson run on the MNA system: J dx = -F(x), x += dx, until both the update
// and the KCL residual pass their tests (docs/solver.md, "Convergence").
#pragma once

#include <cmath>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "klu_solver.h"
#include "knee/solver.h"
#include "linear_refine.h"
#include "mna.h"

namespace knee::internal {

enum class NewtonExit {
  kConverged,  // both tests passed; x is the answer for these aids
  kStepLimit,  // max_newton_steps used up
  kSingular,   // the Jacobian was singular
  kNonFinite,  // a device or the update produced a non-finite value
  kFatal,      // the linear solver failed for good (memory, invalid input)
};

struct NewtonOutcome {
  NewtonExit exit = NewtonExit::kStepLimit;
  int steps = 0;
  std::string detail;  // why it stopped, with the numbers
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
bool RoundingNoise(const MnaSystem& mna, KluSolver& klu, std::span<double> noise);
// |J^-1 t| in node voltages, t_r = abs_current_tol on every KCL row: how far currents of
// the size of the residual's absolute tolerance move a node (bias.cc, LooseNodes). The
// relative part rel_tol*flow_r is left out: mapped through J^-1 it adds up the tolerances
// of every amp-level row onto a common mode held by megohms (a bridge floating on 1 MOhm
// references moved "0.75 V"), although those rows' errors are a balance of large
// currents, not an uncertainty of 0.4 uA each.
bool ToleranceSpread(const MnaSystem& mna, const SolverOptions& options, KluSolver& klu,
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

// Polishing after convergence: further full Newton steps, each kept only if the residual
// still passes after it (PolishKept), until a step is below kPolishFactor times the update
// tolerance, or below kPolishFast times it while converging at least 10x per step (the
// next step, the error left, is then below 1e-4 of the tolerance: 1e-10 relative), or
// kPolishSteps were taken. Quadratic convergence makes one step enough on most networks
// (a sweep point need not pay for a second step that 1e-6 alone would ask for); where
// convergence is linear (faint nodes, flat valleys) the steps go on to 1e-6, so that the
// methods reach the same point to round-off.
inline constexpr int kPolishSteps = 4;
// Polishing goes on past kPolishSteps while the last step still broke the update
// tolerance (ratio > 1: a run that ended on its residual with a node still creeping by
// volts a step), up to kPolishStepsCreeping.
inline constexpr int kPolishStepsCreeping = 50;
inline bool PolishGoesOn(int k, double last_ratio) {
  return k < kPolishSteps || (last_ratio > 1.0 && k < kPolishStepsCreeping);
}
inline constexpr double kPolishFactor = 1e-6;
inline constexpr double kPolishFast = 1e-3;
inline constexpr double kPolishRelative = 1e-11;
inline constexpr double kPolishStalled = 0.25;  // step ratio: steps no longer shrink
// Whether polishing may stop after the step dx to x. *previous: the worst |dx|/tolerance
// of the step before (the last Newton update for the first polishing step); updated.
// Settled also needs every unknown's next change (the last step times the rate the steps
// shrink at) below kPolishRelative of itself or below its rounding noise (RoundingNoise,
// solved with `klu`'s factors into `noise`).
bool PolishSettled(const MnaSystem& mna, const SolverOptions& options, std::span<const double> dx,
                   std::span<const double> x, double* previous, KluSolver& klu,
                   std::span<double> noise);
// faint[u] = 1 for every KCL row u whose currents in the last assembly are all below
// abs_current_tol (a faint node), else 0; whether there is any.
bool MarkFaintNodes(const MnaSystem& mna, const SolverOptions& options, std::span<char> faint);
// dx[u] = 0 wherever faint[u]: a polishing step without its faint nodes' part, retried
// when the whole step is rejected because it throws them about.
void DropFaintPart(std::span<const char> faint, std::span<double> dx);
// Whether a polishing step is kept, from the assembly after it: a finite point inside the
// voltage bound whose residual passes and whose ResidualMerit is no larger than *merit
// (updated), unless the step `dx` to x is within the update tolerance. Far out (1e125 V)
// the residual's round-off allowance lets any residual pass; such a step is neither.
bool PolishKept(const MnaSystem& mna, const SolverOptions& options, bool finite_inside,
                std::span<const double> dx, std::span<const double> x, double* merit);

// "NAME (last change D)" for every unknown whose last update `dx` at `x` broke the update
// tolerance of CheckUpdate: what a failed run reports as still moving.
std::vector<std::string> UnsettledUnknowns(const MnaSystem& mna, const SolverOptions& options,
                                           std::span<const double> dx, std::span<const double> x);

class NewtonSolver {
 public:
  NewtonSolver(MnaSystem* mna, KluSolver* klu, const SolverOptions& options, int size);

  // Runs from x (updated in place) with the given aids; limiting follows the options.
  // Appends one record per step to *trace when trace is not null.
  NewtonOutcome Run(AssemblyAids aids, std::string_view phase, std::span<double> x,
                    std::vector<NewtonStepRecord>* trace);

  // After a failed run: unknowns whose last update exceeded its tolerance and diodes
  // whose junction was still being limited.
  std::vector<std::string> Unsettled(std::span<const double> x) const;

  void set_options(const SolverOptions& options) { options_ = options; }
  // Whether the factors the KLU solver holds are those of the exact model's Jacobian
  // (no gmin, full sources, no regularising shunt) at the last point that was factored.
  bool exact_factors() const { return exact_factors_; }
  // Node voltages are clamped to [-bound, bound] after each step (a safeguard against
  // steps that a nearly singular Jacobian blows up; the bound contains every solution).
  void set_voltage_bound(double bound) { voltage_bound_ = bound; }

 private:
  bool SolveStep(std::span<double> dx, NewtonOutcome* outcome);
  // The converged exit after `steps` steps: the detail text with both tests' worst
  // entries, then the polishing steps.
  NewtonOutcome Converged(int steps, const ToleranceCheck& update, const ToleranceCheck& residual,
                          bool step_taken, const AssemblyAids& aids, std::span<double> x);
  LinearStatus SolveRegularized(std::span<double> dx);
  // last_ratio: the worst |dx|/tolerance of the last Newton update (PolishSettled).
  void Polish(const AssemblyAids& aids, std::span<double> x, double last_ratio);
  bool NoiseFloor();
  void RefineStep(std::span<double> dx);
  bool Clamp(std::span<double> x) const;

  MnaSystem* mna_;
  KluSolver* klu_;
  SolverOptions options_;
  std::vector<double> dx_;
  std::vector<double> saved_x_;
  std::vector<double> noise_;                    // J^-1 times the residual's round-off allowance
  std::vector<double> minus_f_, row_tolerance_;  // RefineStep's right side and row weights
  std::vector<char> faint_;                      // Polish: faint nodes at the polished point
  StepRefiner refiner_;
  double voltage_bound_ = HUGE_VAL;  // V
  std::vector<double> regularized_;  // Jacobian values with the singular-step shunt
  bool plain_run_ = false;           // the current Run has no aid (gmin, source scale)
  bool exact_factors_ = false;       // see exact_factors()
};

}  // namespace knee::internal
