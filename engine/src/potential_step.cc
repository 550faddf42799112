// The potential method's step along one direction: the slope of the potential, the
// trial points, and the line search that accepts a step (docs/solver.md, "The potential
// method").
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "potential.h"

namespace knee::internal {
// d/dt of the potential at x along the node-voltage part dv of dx_: the gradient of the
// potential is the devices' KCL residual without the voltage sources' currents k, so
// slope = sum_r F_r dv_r - sum_k x_k (A^T dv)_k, with A^T dv the change of every source's
// v(P) - v(N) along dv (zero on the feasible set, up to round-off).
double PotentialSolver::Slope(std::span<const double> x) const {
  const auto f = mna_->residual();
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  double slope = 0.0;
  for (size_t r = 0; r < kcl; ++r) slope += f[r] * dx_[r];
  for (size_t k = 0; k < branch_dv_.size(); ++k) slope -= x[kcl + k] * branch_dv_[k];
  return slope;
}

double PotentialSolver::SlopeRoundOff() const {
  double bound = 0.0;
  for (int r = 0; r < mna_->kcl_rows(); ++r) {
    bound += mna_->RoundOffAllowance(r) * std::fabs(dx_[static_cast<size_t>(r)]);
  }
  return bound;
}

// x = base + t*dv for the node voltages and base + MultiplierFraction(t)*dk for the
// source currents, then one assembly pass that gives the Jacobian, the residual and the
// potential.
PotentialSolver::Trial PotentialSolver::Evaluate(std::span<const double> base, double t,
                                                 std::span<double> x) {
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  bool inside = true;
  for (size_t i = 0; i < x.size(); ++i) {
    x[i] = base[i] + (i < kcl ? t : MultiplierFraction(t)) * step_[i];
    if (i < kcl && !(std::fabs(x[i]) <= voltage_bound_)) inside = false;
  }
  AssemblyAids aids;
  aids.want_potential = true;
  aids.junction_floor = floor_;
  const AssemblyOutcome out = mna_->Assemble(x, aids);
  ++evaluations_;
  Trial trial;
  trial.finite = inside && out.finite && std::isfinite(out.potential);
  trial.potential = out.potential;
  trial.potential_magnitude = out.potential_magnitude;
  trial.max_log_current = out.max_log_current;
  if (trial.finite) {
    trial.slope = Slope(x);
    const ToleranceCheck residual = CheckResidual(*mna_, options_);
    trial.residual_ratio = residual.ratio();
    trial.residual_merit = ResidualMerit(*mna_, options_);
  }
  trial.finite = trial.finite && std::isfinite(trial.slope);
  return trial;
}

// The step along the direction just computed: taken whole onto the constraints; along a
// direction whose slope is below its round-off, the longest of a few halvings that does
// not make things worse; else the line search (once more without the current cap).
PotentialSolver::StepChoice PotentialSolver::ChooseStep(const RunState& state,
                                                        const ToleranceCheck& residual,
                                                        bool feasible, std::span<double> x) {
  StepChoice c;
  std::copy(x.begin(), x.end(), base_.begin());
  c.slope0 = Slope(base_);
  const double slope_roundoff = SlopeRoundOff();
  c.before = state.potential;
  c.before_magnitude = state.potential_magnitude;
  if (!feasible) {
    c.phase = "potential (sources)";
    c.accepted = Evaluate(base_, 1.0, x);
    c.trials = 1;
    c.ok = c.accepted.finite;
  } else if (!(c.slope0 < -slope_roundoff)) {
    // The slope along the Newton direction is below its own round-off: the point is
    // stationary as far as floating point can tell. The full step is taken when it
    // does not raise the potential by more than the potential's round-off or when it
    // lowers the worst residual-to-tolerance ratio (the potential, a sum of terms up
    // to kW, cannot resolve the last nanoamperes of a node), else the longest of a
    // few halvings that does; none: the point stays (a zero step), and the convergence
    // tests decide.
    const double before_ratio = residual.ratio();
    const double merit0 = ResidualMerit(*mna_, options_);
    for (c.trials = 1; c.trials <= tuning_.max_stationary_halvings; ++c.trials, c.t *= 0.5) {
      c.accepted = Evaluate(base_, c.t, x);
      if (c.accepted.finite &&
          (c.accepted.potential - c.before <= c.RoundOff(c.accepted) ||
           c.accepted.residual_ratio < before_ratio || c.accepted.residual_merit < merit0)) {
        break;
      }
    }
    if (c.trials > tuning_.max_stationary_halvings) {
      c.t = 0.0;
      c.accepted = Evaluate(base_, 0.0, x);
      ++c.trials;
    }
    c.ok = c.accepted.finite;
  } else {
    const double merit0 = ResidualMerit(*mna_, options_);
    const double curvature = state.creeping ? tuning_.creep_curvature : tuning_.curvature_fraction;
    c.ok = LineSearch(c.slope0, slope_roundoff, c.before, c.before_magnitude, merit0,
                      std::max(tuning_.log_current_cap, state.base_log_current), curvature, x, &c.t,
                      &c.trials, &c.accepted);
    if (!c.ok) {
      int more = 0;
      c.ok = LineSearch(c.slope0, slope_roundoff, c.before, c.before_magnitude, merit0,
                        std::numeric_limits<double>::infinity(), curvature, x, &c.t, &more,
                        &c.accepted);
      c.trials += more;
    }
  }
  return c;
}

bool PotentialSolver::Repeats() {
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  const double largest = MaxAbs(step_, kcl);
  bool same = largest > 0.0;
  for (size_t i = 0; i < kcl; ++i) {
    same = same && std::fabs(step_[i] - last_step_[i]) <= tuning_.creep_repeat * largest;
    last_step_[i] = step_[i];
  }
  return same;
}

// A line search for the weak Wolfe conditions (Nocedal and Wright, ch. 3: Armijo's
// sufficient decrease, Armijo 1966, and the curvature condition phi'(t) >= c2 phi'(0);
// the bracketing and zoom phases of their Algorithms 3.5 and 3.6, recalled from memory,
// with bisection as the interpolation). A step that satisfies sufficient decrease while
// the potential still falls at nearly the initial rate is too short: taking it would let
// one junction far below its knee hold the whole network to a tiny step, step after step.
// The search lengthens such a step (t = 2, 4, ...) or, when a longer trial has already
// failed, bisects between the two (geometrically while they differ by more than 4x),
// until the slope has flattened. Sufficient decrease is tested beyond round-off, or
// certified by the slope: for a convex phi, phi(t) <= phi(0) + t*phi'(t), so
// phi'(t) <= c1*phi'(0) proves phi(t) <= phi(0) + c1*t*phi'(0) without subtracting two
// nearly equal potentials. If the budget of trials runs out, the longest step known to
// satisfy sufficient decrease is taken.
bool PotentialSolver::LineSearch(double slope0, double slope_roundoff, double before,
                                 double before_magnitude, double merit0, double log_current_cap,
                                 double curvature, std::span<double> x, double* t_out,
                                 int* trials_out, Trial* accepted) {
  const auto roundoff = [&](const Trial& tr) {
    return MnaSystem::kRoundOffFactor * (tr.potential_magnitude + before_magnitude);
  };
  const auto decreases = [&](const Trial& tr, double t) {
    return (tr.potential - before) + roundoff(tr) <= tuning_.armijo_fraction * t * slope0 ||
           tr.slope + slope_roundoff <= tuning_.armijo_fraction * slope0;
  };
  // Where the change of the potential is below its own round-off, the potential cannot
  // rank the trial points (a sum of terms up to kW does not see the last nanoamperes of
  // a node). There the residual's weighted sum of squares, which the Newton direction
  // lowers at the rate 2 * merit0, decides with Armijo's condition; a step accepted so
  // does not raise the potential beyond its round-off.
  const auto resolves_residual = [&](const Trial& tr, double t) {
    return t <= 1.0 && std::fabs(tr.potential - before) <= roundoff(tr) &&
           tr.residual_merit <= (1.0 - 2.0 * tuning_.armijo_fraction * t) * merit0;
  };
  double lo = 0.0;  // longest step known to satisfy sufficient decrease
  double hi = std::numeric_limits<double>::infinity();  // shortest step known to fail it
  // A direction that a nearly singular Hessian made enormous (1e100 V) is first cut to
  // reach no further than the voltage bound: the solution lies inside it.
  double t = std::min(1.0, voltage_bound_ / MaxAbs(step_, static_cast<size_t>(mna_->kcl_rows())));
  if (!(t > 0.0)) t = 1.0;
  if (t < 1.0) hi = 2.0 * t;  // no doubling past the bound
  int trials = 0;
  while (trials < tuning_.max_line_search_trials) {
    Trial trial = Evaluate(base_, t, x);
    ++trials;
    if (trial.finite && trial.max_log_current <= log_current_cap && resolves_residual(trial, t)) {
      *accepted = trial;
      *t_out = t;
      *trials_out = trials;
      return true;
    }
    if (trial.finite && trial.max_log_current <= log_current_cap && decreases(trial, t)) {
      if (trial.slope >= curvature * slope0) {  // flattened (or past the minimum)
        *accepted = trial;
        *t_out = t;
        *trials_out = trials;
        return true;
      }
      lo = t;
    } else {
      hi = t;
    }
    if (std::isinf(hi)) {
      if (t >= tuning_.max_step_length) break;
      t *= 2.0;
    } else if (lo == 0.0) {
      // Only failures so far: shorten, by quadratic interpolation of phi(0), phi'(0) and
      // phi(t) where that is finite, within [0.1 t, 0.5 t] (Nocedal and Wright, ch. 3).
      const double change = trial.potential - before;
      const double bend = 2.0 * (change - slope0 * t);
      const double guess = trial.finite && bend > 0.0 ? -slope0 * t * t / bend : 0.1 * t;
      t = std::clamp(guess, 0.1 * t, 0.5 * t);
    } else {
      t = hi > 4.0 * lo ? std::sqrt(lo * hi) : 0.5 * (lo + hi);
      if (!(t > lo && t < hi)) break;  // the bracket is as narrow as doubles allow
    }
  }
  if (lo == 0.0) {
    *t_out = t;
    *trials_out = trials;
    return false;
  }
  // Out of trials (or of bracket) with a step that satisfies sufficient decrease: take it.
  // The assembly of the last trial is not that point's, so assemble it again.
  *accepted = Evaluate(base_, lo, x);
  *t_out = lo;
  *trials_out = trials + 1;
  return accepted->finite;
}

}  // namespace knee::internal
