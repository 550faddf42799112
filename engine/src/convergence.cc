// The convergence tests both solvers share (convergence.h).
#include "convergence.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace knee::internal {
namespace {

void Consider(ToleranceCheck* worst, int index, double value, double bound) {
  // Compare value/bound ratios without dividing (bounds are > 0).
  if (worst->index < 0 || value * worst->bound > worst->value * bound) {
    *worst = {index, value, bound};
  }
}

}  // namespace

ToleranceCheck CheckUpdate(const MnaSystem& mna, const SolverOptions& o, std::span<const double> dx,
                           std::span<const double> x, std::span<const double> noise,
                           bool exempt_loose) {
  ToleranceCheck worst;
  const auto flow = mna.flow();
  for (int u = 0; u < mna.size(); ++u) {
    const auto i = static_cast<size_t>(u);
    // A faint node (every current at it below abs_current_tol) is not determined by the
    // tolerance: its KCL holds across the whole range it may still move in. Its voltage
    // is settled afterwards with a tolerance scaled to its own currents (loose_nodes.cc,
    // ResolveFaintNodes), or reported as faint.
    if (exempt_loose && !mna.IsCurrentUnknown(u) && flow[i] < o.abs_current_tol) continue;
    const double abs_tol = mna.IsCurrentUnknown(u) ? o.abs_current_tol : o.abs_voltage_tol;
    const double floor = noise.empty() ? 0.0 : kNoiseFactor * std::fabs(noise[i]);
    Consider(&worst, u, std::fabs(dx[i]), abs_tol + o.rel_tol * std::fabs(x[i]) + floor);
  }
  return worst;
}

namespace {

// Calls fn(index, |residual|, bound) for every row of the residual test and for every
// island root's own KCL.
template <typename Fn>
void ForEachResidualTest(const MnaSystem& mna, const SolverOptions& o, Fn&& fn) {
  const auto f = mna.residual();
  const auto flow = mna.flow();
  for (int r = 0; r < mna.size(); ++r) {
    const auto i = static_cast<size_t>(r);
    const double bound =
        (r < mna.kcl_rows() ? o.abs_current_tol + o.rel_tol * flow[i] : o.abs_voltage_tol) +
        mna.RoundOffAllowance(r);
    fn(r, std::fabs(f[i]), bound);
  }
  // An island root's own KCL (its row holds the island's sum): the sum less the members'
  // rows, against the island's largest current and the rows' summed allowances.
  mna.ForEachRootBalance([&](int root, double residual, double largest, double allowance) {
    fn(root, std::fabs(residual), o.abs_current_tol + o.rel_tol * largest + allowance);
  });
}

}  // namespace

ToleranceCheck CheckResidual(const MnaSystem& mna, const SolverOptions& o) {
  ToleranceCheck worst;
  ForEachResidualTest(mna, o, [&](int index, double value, double bound) {
    Consider(&worst, index, value, bound);
  });
  return worst;
}

double ResidualMerit(const MnaSystem& mna, const SolverOptions& o) {
  double merit = 0.0;
  ForEachResidualTest(mna, o, [&](int, double value, double bound) {
    const double ratio = value / bound;
    merit += ratio * ratio;
  });
  return merit;
}

std::string StepLimitDetail(const MnaSystem& mna, const SolverOptions& options,
                            const ToleranceCheck& update) {
  const ToleranceCheck residual = CheckResidual(mna, options);
  return fmt::format(
      "no convergence in {} steps: last |dx| at '{}' = {:.3g} (bound {:.3g}), worst residual "
      "at '{}' = {:.3g} (bound {:.3g})",
      options.max_newton_steps, mna.UnknownName(update.index), update.value, update.bound,
      mna.UnknownName(residual.index), residual.value, residual.bound);
}

// The residual of a point is known only to its round-off allowance a_r (16 eps times
// the magnitudes of the terms of row r), so a Newton step is known only to about
// J^-1 a: where the residual already passes, a step of that size is round-off being
// chased, not a move toward the solution (a node held by a conductance of 1e-11 S with
// a residual of 4e-17 A of pure rounding steps 4 uV, forever). noise_ = J^-1 a, with
// the factorisation of the step just taken. False if the solve fails.
namespace {

// v = |J^-1 v| in node voltages, with the factors `klu` holds.
bool AbsoluteResponse(const MnaSystem& mna, LinearSolver& klu, std::span<double> v) {
  if (klu.Solve(v) != LinearStatus::kOk) return false;
  for (double& n : v) n = std::fabs(n);
  mna.ToNodeSpace(v);
  return true;
}

}  // namespace

bool RoundingNoise(const MnaSystem& mna, LinearSolver& klu, std::span<double> noise) {
  for (int r = 0; r < mna.size(); ++r) noise[static_cast<size_t>(r)] = mna.RoundOffAllowance(r);
  return AbsoluteResponse(mna, klu, noise);
}

bool ToleranceSpread(const MnaSystem& mna, const SolverOptions& o, LinearSolver& klu,
                     std::span<double> spread) {
  for (int r = 0; r < mna.size(); ++r) {
    spread[static_cast<size_t>(r)] = r < mna.kcl_rows() ? o.abs_current_tol : 0.0;
  }
  return AbsoluteResponse(mna, klu, spread);
}

std::vector<std::string> UnsettledUnknowns(const MnaSystem& mna, const SolverOptions& options,
                                           std::span<const double> dx, std::span<const double> x) {
  std::vector<std::string> names;
  for (int u = 0; u < mna.size(); ++u) {
    const auto i = static_cast<size_t>(u);
    const double abs_tol =
        mna.IsCurrentUnknown(u) ? options.abs_current_tol : options.abs_voltage_tol;
    if (!(std::fabs(dx[i]) <= abs_tol + options.rel_tol * std::fabs(x[i]))) {
      names.push_back(fmt::format("{} (last change {:.3g})", mna.UnknownName(u), dx[i]));
    }
  }
  return names;
}

}  // namespace knee::internal
