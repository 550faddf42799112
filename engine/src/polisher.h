// Polishing after convergence, shared by both solvers: further full Newton steps on the
// exact model, each kept only where it keeps the residual passing (docs/solver.md,
// "Convergence").
#pragma once

#include <algorithm>
#include <span>
#include <vector>

#include "convergence.h"

namespace knee::internal {

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

// The polishing loop. Each step: the point is kept in `base`, the solver's full Newton
// step goes into `dx` (solve(), false: polishing ends), and apply() sets x = base + dx,
// assembles it and says whether it is finite and inside the voltage bound. A step that
// PolishKept rejects is tried once more without its faint nodes' part (may_mask: not on
// a rung of the aid ladder, a waypoint rather than an answer); a second rejection, or a
// failed solve, leaves x at the last kept point.
class Polisher {
 public:
  explicit Polisher(size_t size = 0) : faint_(size, 0) {}
  template <typename Solve, typename Apply>
  void Run(const MnaSystem& mna, const SolverOptions& options, KluSolver& klu, std::span<double> x,
           std::span<double> base, std::span<double> dx, std::span<double> noise, double last_ratio,
           bool may_mask, Solve&& solve, Apply&& apply) {
    faint_.resize(x.size());
    double merit = ResidualMerit(mna, options);
    const auto kept = [&] {
      const bool finite_inside = apply();
      return PolishKept(mna, options, finite_inside, dx, x, &merit);
    };
    const auto restore = [&] { std::copy(base.begin(), base.end(), x.begin()); };
    bool masked = false;
    for (int k = 0; PolishGoesOn(k, last_ratio); ++k) {
      std::copy(x.begin(), x.end(), base.begin());
      if (!solve()) return;
      const bool any_faint = MarkFaintNodes(mna, options, faint_);  // at x, for the retry
      if (!kept()) {
        // A step rejected because it throws faint nodes about (a group held by saturated
        // junctions beside a loose one) is tried once more without their part: the other
        // nodes still get their polish (a firm node would otherwise keep a residual the
        // next step would remove). Only kept if it passes the same test.
        if (masked || !any_faint || !may_mask) {
          restore();
          return;
        }
        masked = true;
        DropFaintPart(faint_, dx);
        if (!kept()) {
          restore();
          return;
        }
      }
      if (PolishSettled(mna, options, dx, x, &last_ratio, klu, noise)) return;
    }
  }

 private:
  std::vector<char> faint_;  // faint nodes at the polished point
};

}  // namespace knee::internal
