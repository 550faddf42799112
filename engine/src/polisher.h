// Polishing after convergence, shared by both solvers: further full Newton steps on the
// exact model, each kept only where it keeps the residual passing (docs/solver.md,
// "Convergence").
#pragma once

#include <algorithm>
#include <span>
#include <vector>

#include "convergence.h"
#include "tuning.h"

namespace knee::internal {

// Polishing after convergence: further full Newton steps, each kept only if the residual
// still passes after it (PolishKept), while PolishGoesOn, until PolishSettled (the
// constants and their meaning: PolishTuning in tuning.h).
inline bool PolishGoesOn(int k, double last_ratio, const PolishTuning& t) {
  return k < t.steps || (last_ratio > 1.0 && k < t.steps_creeping);
}
// Whether polishing may stop after the step dx to x. *previous: the worst |dx|/tolerance
// of the step before (the last Newton update for the first polishing step); updated.
// Settled also needs every unknown's next change (the last step times the rate the steps
// shrink at) below PolishTuning::relative of itself or below its rounding noise (RoundingNoise,
// solved with `klu`'s factors into `noise`).
bool PolishSettled(const MnaSystem& mna, const SolverOptions& options, std::span<const double> dx,
                   std::span<const double> x, double* previous, LinearSolver& klu,
                   std::span<double> noise, const PolishTuning& t);
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
  explicit Polisher(size_t size = 0, const PolishTuning& tuning = {})
      : tuning_(tuning), faint_(size, 0) {}
  template <typename Solve, typename Apply>
  void Run(const MnaSystem& mna, const SolverOptions& options, LinearSolver& klu,
           std::span<double> x, std::span<double> base, std::span<double> dx,
           std::span<double> noise, double last_ratio, bool may_mask, Solve&& solve,
           Apply&& apply) {
    faint_.resize(x.size());
    double merit = ResidualMerit(mna, options);
    const auto kept = [&] {
      const bool finite_inside = apply();
      return PolishKept(mna, options, finite_inside, dx, x, &merit);
    };
    const auto restore = [&] { std::copy(base.begin(), base.end(), x.begin()); };
    bool masked = false;
    for (int k = 0; PolishGoesOn(k, last_ratio, tuning_); ++k) {
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
      if (PolishSettled(mna, options, dx, x, &last_ratio, klu, noise, tuning_)) return;
    }
  }

 private:
  PolishTuning tuning_;
  std::vector<char> faint_;  // faint nodes at the polished point
};

}  // namespace knee::internal
