// The tests of the polishing steps (polisher.h).
#include "polisher.h"

#include <algorithm>
#include <cmath>

namespace knee::internal {

// One more Newton step after convergence: a converged Newton iteration is quadratic, so
// this brings the answer to round-off level. Kept only if the residual stays within its
// tolerance; otherwise the converged point stands.
bool PolishKept(const MnaSystem& mna, const SolverOptions& options, bool finite_inside,
                std::span<const double> dx, std::span<const double> x, double* merit) {
  if (!finite_inside || !CheckResidual(mna, options).passed()) return false;
  const double after = ResidualMerit(mna, options);
  // A step within the update tolerance is kept even when the merit jitters at round-off.
  if (!(after <= *merit) && !CheckUpdate(mna, options, dx, x).passed()) return false;
  *merit = after;
  return true;
}

bool MarkFaintNodes(const MnaSystem& mna, const SolverOptions& options, std::span<char> faint) {
  const auto flow = mna.flow();
  bool any = false;
  for (int u = 0; u < mna.kcl_rows(); ++u) {
    const bool below = flow[static_cast<size_t>(u)] < options.abs_current_tol;
    faint[static_cast<size_t>(u)] = below ? 1 : 0;
    any = any || below;
  }
  return any;
}

void DropFaintPart(std::span<const char> faint, std::span<double> dx) {
  for (size_t u = 0; u < faint.size() && u < dx.size(); ++u) {
    if (faint[u]) dx[u] = 0.0;
  }
}

bool PolishSettled(const MnaSystem& mna, const SolverOptions& options, std::span<const double> dx,
                   std::span<const double> x, double* previous, LinearSolver& klu,
                   std::span<double> noise, const PolishTuning& t) {
  const ToleranceCheck worst = CheckUpdate(mna, options, dx, x, {}, /*exempt_loose=*/false);
  const double ratio = worst.ratio();
  const double before = *previous;
  *previous = ratio;
  if (!(ratio <= t.factor || (ratio <= t.fast && ratio <= 0.1 * before))) {
    // Steps below t.fast of the tolerance that no longer shrink are round-off: more
    // of them change nothing. A step larger than the one before is no stall (the steps
    // may grow again before they converge).
    return ratio <= t.fast && ratio >= t.stalled * before && ratio <= before;
  }
  // Each unknown to t.relative of itself: the change the next step would make, at
  // most the last step times the rate the steps shrink at, below that or below the
  // rounding of the equations (a node at 1e-11 V beside 500 V sources).
  const double rate = std::min(1.0, before > 0.0 ? ratio / before : 1.0);
  const auto unsettled = [&](size_t i, double floor) {
    return !(rate * std::fabs(dx[i]) <= t.relative * std::fabs(x[i]) + floor);
  };
  bool any = false;
  for (size_t i = 0; i < dx.size() && !any; ++i) any = unsettled(i, 0.0);
  if (!any) return true;
  if (!RoundingNoise(mna, klu, noise)) return true;  // the tolerance test above stands
  // The noise estimate is a bound, often far above what the steps settle to: it ends the
  // polishing only once the steps stop shrinking.
  if (rate < t.stalled) return false;
  for (size_t i = 0; i < dx.size(); ++i) {
    if (unsettled(i, kNoiseFactor * noise[i])) return false;
  }
  return true;
}

}  // namespace knee::internal
