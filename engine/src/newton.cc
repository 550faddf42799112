// The Newton loop. Every exit is a named test that records its numbers.
#include "newton.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace knee::internal {
namespace {

// Halvings of a step that left the doubles (NewtonSolver::Run): 2^-60 of any step.
constexpr int kOverflowHalvings = 60;

void Consider(ToleranceCheck* worst, int index, double value, double bound) {
  // Compare value/bound ratios without dividing (bounds are > 0).
  if (worst->index < 0 || value * worst->bound > worst->value * bound) {
    *worst = {index, value, bound};
  }
}

double MaxAbs(std::span<const double> v, size_t count) {
  double m = 0.0;
  for (size_t i = 0; i < count; ++i) m = std::max(m, std::fabs(v[i]));
  return m;
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
    // is settled afterwards with a tolerance scaled to its own currents (bias.cc,
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

NewtonSolver::NewtonSolver(MnaSystem* mna, KluSolver* klu, const SolverOptions& options, int size)
    : mna_(mna),
      klu_(klu),
      options_(options),
      dx_(static_cast<size_t>(size), 0.0),
      saved_x_(static_cast<size_t>(size), 0.0),
      noise_(static_cast<size_t>(size), 0.0),
      minus_f_(static_cast<size_t>(size), 0.0),
      row_tolerance_(static_cast<size_t>(size), 0.0),
      faint_(static_cast<size_t>(size), 0),
      regularized_(mna->values().size(), 0.0) {}

NewtonOutcome NewtonSolver::Run(AssemblyAids aids, std::string_view phase, std::span<double> x,
                                std::vector<NewtonStepRecord>* trace) {
  aids.limit_junctions = options_.junction_limiting;
  plain_run_ = aids.gmin == 0.0 && aids.source_scale == 1.0;
  NewtonOutcome outcome;
  mna_->BeginRun(x);
  std::fill(dx_.begin(), dx_.end(), 0.0);
  ToleranceCheck update;
  update.index = 0;
  update.value = 1.0;  // no update yet: not settled
  bool last_clamped = false;
  for (int step = 1; step <= options_.max_newton_steps; ++step) {
    outcome.steps = step;
    AssemblyOutcome assembled = mna_->Assemble(x, aids);
    // The law is exact up to the largest double, so a step can land where a junction's
    // current is not a double (a forced current into a junction at 0 V asks for 2.6e9 V
    // when junction limiting is off). Such a step is halved back toward its start: a
    // damping of Newton's step, not a change of the law, and not a settled step.
    for (int halving = 0; !assembled.finite && step > 1 && halving < kOverflowHalvings; ++halving) {
      for (size_t i = 0; i < x.size(); ++i) {
        dx_[i] *= 0.5;
        x[i] -= dx_[i];
      }
      assembled = mna_->Assemble(x, aids);
      last_clamped = true;
    }
    if (!assembled.finite) {
      outcome.exit = NewtonExit::kNonFinite;
      outcome.detail =
          fmt::format("step {}: element '{}' produced a non-finite value", step,
                      assembled.bad_element >= 0 ? mna_->ElementName(assembled.bad_element) : "?");
      return outcome;
    }
    // Limiting acts when the junctions are evaluated at the new x: it belongs to the
    // previous step's record.
    if (trace != nullptr && step > 1) trace->back().limited = assembled.limited;
    const ToleranceCheck residual = CheckResidual(*mna_, options_);
    if (step > 1 && update.passed() && !last_clamped && !assembled.limited && residual.passed() &&
        assembled.unresolved_element < 0) {
      return Converged(step - 1, update, residual, /*step_taken=*/true, aids, x);
    }
    if (!SolveStep(dx_, &outcome)) {
      outcome.detail = fmt::format("step {}: {}", step, outcome.detail);
      return outcome;
    }
    // From a point whose residual already passes, a step that fails the update test only
    // on loose nodes or by the rounding it chases is not taken: after an aid is removed,
    // such a step throws a node that nothing holds to 1e8 V and undoes the aid's answer.
    if (residual.passed() && !assembled.limited && assembled.unresolved_element < 0 &&
        !CheckUpdate(*mna_, options_, dx_, x, {}, /*exempt_loose=*/false).passed()) {
      ToleranceCheck here = CheckUpdate(*mna_, options_, dx_, x);
      if (!here.passed() && NoiseFloor()) here = CheckUpdate(*mna_, options_, dx_, x, noise_);
      if (here.passed()) {
        return Converged(step - 1, here, residual, /*step_taken=*/false, aids, x);
      }
    }
    for (size_t i = 0; i < x.size(); ++i) x[i] += dx_[i];
    const bool clamped = Clamp(x);
    update = CheckUpdate(*mna_, options_, dx_, x);
    if (!update.passed() && residual.passed() && !assembled.limited &&
        assembled.unresolved_element < 0 && NoiseFloor()) {
      update = CheckUpdate(*mna_, options_, dx_, x, noise_);
    }
    last_clamped = clamped;  // a clamped step is no Newton step: not settled
    if (!std::isfinite(update.value)) {
      outcome.exit = NewtonExit::kNonFinite;
      outcome.detail = fmt::format("step {}: the update of '{}' is not finite", step,
                                   mna_->UnknownName(update.index));
      return outcome;
    }
    if (trace != nullptr) {
      trace->push_back({step, MaxAbs(dx_, dx_.size()),
                        MaxAbs(mna_->residual(), static_cast<size_t>(mna_->kcl_rows())), false,
                        std::string(phase)});
    }
  }
  outcome.exit = NewtonExit::kStepLimit;
  outcome.detail = StepLimitDetail(*mna_, options_, update);
  return outcome;
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
bool AbsoluteResponse(const MnaSystem& mna, KluSolver& klu, std::span<double> v) {
  if (klu.Solve(v) != LinearStatus::kOk) return false;
  for (double& n : v) n = std::fabs(n);
  mna.ToNodeSpace(v);
  return true;
}

}  // namespace

bool RoundingNoise(const MnaSystem& mna, KluSolver& klu, std::span<double> noise) {
  for (int r = 0; r < mna.size(); ++r) noise[static_cast<size_t>(r)] = mna.RoundOffAllowance(r);
  return AbsoluteResponse(mna, klu, noise);
}

bool ToleranceSpread(const MnaSystem& mna, const SolverOptions& o, KluSolver& klu,
                     std::span<double> spread) {
  for (int r = 0; r < mna.size(); ++r) {
    spread[static_cast<size_t>(r)] = r < mna.kcl_rows() ? o.abs_current_tol : 0.0;
  }
  return AbsoluteResponse(mna, klu, spread);
}

bool NewtonSolver::NoiseFloor() { return RoundingNoise(*mna_, *klu_, noise_); }

// Clamps the node voltages to the bound; true if any was clamped.
bool NewtonSolver::Clamp(std::span<double> x) const {
  bool clamped = false;
  for (int u = 0; u < mna_->kcl_rows(); ++u) {
    double& v = x[static_cast<size_t>(u)];
    if (std::fabs(v) > voltage_bound_) {
      v = std::copysign(voltage_bound_, v);
      clamped = true;
    }
  }
  return clamped;
}

NewtonOutcome NewtonSolver::Converged(int steps, const ToleranceCheck& update,
                                      const ToleranceCheck& residual, bool step_taken,
                                      const AssemblyAids& aids, std::span<double> x) {
  NewtonOutcome outcome;
  outcome.exit = NewtonExit::kConverged;
  outcome.steps = steps + 1;
  outcome.detail = fmt::format(
      "converged in {} steps: worst |dx| at '{}' = {:.3g} <= {:.3g}{}, worst residual at "
      "'{}' = {:.3g} <= {:.3g}",
      steps, mna_->UnknownName(update.index), update.value, update.bound,
      step_taken ? "" : " (step not taken)", mna_->UnknownName(residual.index), residual.value,
      residual.bound);
  Polish(aids, x, update.ratio());
  return outcome;
}

// Solves J dx = -F with the values and residual of the last assembly.
bool NewtonSolver::SolveStep(std::span<double> dx, NewtonOutcome* outcome) {
  LinearStatus status = klu_->Refactor(mna_->values());
  exact_factors_ = plain_run_ && status == LinearStatus::kOk;
  if (status == LinearStatus::kOk) {
    const auto f = mna_->residual();
    for (size_t i = 0; i < dx.size(); ++i) dx[i] = -f[i];
    status = klu_->Solve(dx);
    if (status == LinearStatus::kOk && klu_->rcond() < StepRefiner::kCheckBelowRcond) {
      RefineStep(dx);
    }
    if (status == LinearStatus::kOk) mna_->ToNodeSpace(dx);
  }
  if (status == LinearStatus::kSingular) status = SolveRegularized(dx);
  if (status == LinearStatus::kOk) return true;
  outcome->exit = status == LinearStatus::kSingular ? NewtonExit::kSingular : NewtonExit::kFatal;
  outcome->detail = klu_->message();
  return false;
}

// A Jacobian made singular by junctions whose conductance underflowed (deeply reverse
// biased strings: exp(-800) is 0 in double precision) leaves the voltages of the nodes
// between them undetermined. The step is then taken with a small shunt on each KCL
// diagonal (1e-12 of the entry, at least 1e-18 S), in the manner of a Levenberg-Marquardt
// step: only the direction changes, F(x) is still the exact model's, so the converged
// point satisfies the exact equations and carries no aid (common practice, no source).
// Largest change of any unknown (V or A) a regularised step may make.
constexpr double kMaxRegularizedStep = 1e6;

LinearStatus NewtonSolver::SolveRegularized(std::span<double> dx) {
  const auto values = mna_->values();
  std::copy(values.begin(), values.end(), regularized_.begin());
  for (int slot : mna_->diagonal_slots()) {
    double& v = regularized_[static_cast<size_t>(slot)];
    v += std::max(1e-12 * std::fabs(v), 1e-18);
  }
  LinearStatus status = klu_->Factor(regularized_);
  if (status != LinearStatus::kOk) return status;
  const auto f = mna_->residual();
  for (size_t i = 0; i < dx.size(); ++i) dx[i] = -f[i];
  status = klu_->Solve(dx);
  if (status != LinearStatus::kOk) return status;
  // The shunted factors are a preconditioner for the exact Jacobian's step.
  RefineStep(dx);
  mna_->ToNodeSpace(dx);
  // The shunt only resolves nodes whose residual is already negligible. A step that the
  // shunt itself makes enormous (a current pushed into a node held by nothing but the
  // shunt) is no Newton step: report the matrix as singular so the aid ladder takes over
  // instead of a point at 1e14 V whose KCL residual drowns in rounding.
  for (double d : dx) {
    if (!(std::fabs(d) <= kMaxRegularizedStep)) return LinearStatus::kSingular;
  }
  return status;
}

// Where the factors may have lost a small conductance to rounding (a tiny reciprocal
// condition estimate, or a shunted matrix), the step is checked against the device-by-
// device Jacobian and refined (linear_refine.h). Rows are weighed by their residual
// tolerance, so "accurate" means: the linear model's residual is a tenth of what the
// convergence test allows.
void NewtonSolver::RefineStep(std::span<double> dx) {
  const auto f = mna_->residual();
  const auto flow = mna_->flow();
  for (int r = 0; r < mna_->size(); ++r) {
    const auto i = static_cast<size_t>(r);
    minus_f_[i] = -f[i];
    row_tolerance_[i] =
        (r < mna_->kcl_rows() ? options_.abs_current_tol + options_.rel_tol * flow[i]
                              : options_.abs_voltage_tol) +
        mna_->RoundOffAllowance(r);
  }
  refiner_.Refine(*mna_, *klu_, minus_f_, row_tolerance_, dx);
}

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
                   std::span<const double> x, double* previous, KluSolver& klu,
                   std::span<double> noise) {
  const ToleranceCheck worst = CheckUpdate(mna, options, dx, x, {}, /*exempt_loose=*/false);
  const double ratio = worst.ratio();
  const double before = *previous;
  *previous = ratio;
  if (!(ratio <= kPolishFactor || (ratio <= kPolishFast && ratio <= 0.1 * before))) {
    // Steps below kPolishFast of the tolerance that no longer shrink are round-off: more
    // of them change nothing. A step larger than the one before is no stall (the steps
    // may grow again before they converge).
    return ratio <= kPolishFast && ratio >= kPolishStalled * before && ratio <= before;
  }
  // Each unknown to kPolishRelative of itself: the change the next step would make, at
  // most the last step times the rate the steps shrink at, below that or below the
  // rounding of the equations (a node at 1e-11 V beside 500 V sources).
  const double rate = std::min(1.0, before > 0.0 ? ratio / before : 1.0);
  const auto unsettled = [&](size_t i, double floor) {
    return !(rate * std::fabs(dx[i]) <= kPolishRelative * std::fabs(x[i]) + floor);
  };
  bool any = false;
  for (size_t i = 0; i < dx.size() && !any; ++i) any = unsettled(i, 0.0);
  if (!any) return true;
  if (!RoundingNoise(mna, klu, noise)) return true;  // the tolerance test above stands
  // The noise estimate is a bound, often far above what the steps settle to: it ends the
  // polishing only once the steps stop shrinking.
  if (rate < kPolishStalled) return false;
  for (size_t i = 0; i < dx.size(); ++i) {
    if (unsettled(i, kNoiseFactor * noise[i])) return false;
  }
  return true;
}

void NewtonSolver::Polish(const AssemblyAids& aids, std::span<double> x, double last_ratio) {
  AssemblyAids exact = aids;
  exact.limit_junctions = false;
  double merit = ResidualMerit(*mna_, options_);
  bool masked = false;
  for (int k = 0; PolishGoesOn(k, last_ratio); ++k) {
    std::copy(x.begin(), x.end(), saved_x_.begin());
    NewtonOutcome ignored;
    if (!SolveStep(dx_, &ignored)) return;
    const bool any_faint = MarkFaintNodes(*mna_, options_, faint_);  // at x, for the retry
    for (size_t i = 0; i < x.size(); ++i) x[i] += dx_[i];
    bool inside = !Clamp(x);
    AssemblyOutcome assembled = mna_->Assemble(x, exact);
    if (!PolishKept(*mna_, options_, inside && assembled.finite, dx_, x, &merit)) {
      std::copy(saved_x_.begin(), saved_x_.end(), x.begin());
      // A step rejected because it throws faint nodes about (a group held by saturated
      // junctions beside a loose one) is tried once more without their part: the other
      // nodes still get their polish (a firm node would otherwise keep a residual the
      // next step would remove). Only kept if it passes the same test, and
      // only in a run without aids: a rung of the ladder is a waypoint, not an answer.
      if (masked || !any_faint || !plain_run_) return;
      masked = true;
      DropFaintPart(faint_, dx_);
      for (size_t i = 0; i < x.size(); ++i) x[i] += dx_[i];
      inside = !Clamp(x);
      assembled = mna_->Assemble(x, exact);
      if (!PolishKept(*mna_, options_, inside && assembled.finite, dx_, x, &merit)) {
        std::copy(saved_x_.begin(), saved_x_.end(), x.begin());
        return;
      }
    }
    if (PolishSettled(*mna_, options_, dx_, x, &last_ratio, *klu_, noise_)) return;
  }
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

std::vector<std::string> NewtonSolver::Unsettled(std::span<const double> x) const {
  std::vector<std::string> names = UnsettledUnknowns(*mna_, options_, dx_, x);
  for (int e : mna_->devices().LimitedElements()) {
    names.push_back(fmt::format("{} (junction step limited)", mna_->ElementName(e)));
  }
  return names;
}

}  // namespace knee::internal
