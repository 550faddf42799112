// The Newton loop. Every exit is a named test that records its numbers.
#include "newton.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace knee::internal {
namespace {

// Halvings of a step that left the doubles (NewtonSolver::Run): 2^-60 of any step.
constexpr int kOverflowHalvings = 60;

}  // namespace

NewtonSolver::NewtonSolver(MnaSystem* mna, LinearSolver* klu, const SolverOptions& options,
                           int size)
    : mna_(mna),
      klu_(klu),
      configured_(options),
      options_(options),
      size_(static_cast<size_t>(size)),
      polisher_(static_cast<size_t>(size)) {}

// Sized on the first Run, not at construction: a cold solve of a monotone network is the
// potential method's, and a million unknowns make these 24 MB. A sweep sizes them again at
// its first warm point (a cold solve releases them); the loop then allocates nothing.
// RefineStep's two are sized on its first call (most circuits never refine a step), as
// regularized_ is on the first singular step.
void NewtonSolver::SizeVectors() {
  if (dx_.size() == size_) return;
  for (std::vector<double>* v : {&dx_, &saved_x_, &noise_}) v->assign(size_, 0.0);
}

void NewtonSolver::ReleaseWorkspace() {
  for (std::vector<double>* v :
       {&dx_, &saved_x_, &noise_, &minus_f_, &row_tolerance_, &regularized_}) {
    std::vector<double>().swap(*v);
  }
}

NewtonOutcome NewtonSolver::Run(AssemblyAids aids, std::string_view phase, std::span<double> x,
                                std::vector<NewtonStepRecord>* trace) {
  return Run(aids, phase, x, trace, configured_);
}

NewtonOutcome NewtonSolver::Run(AssemblyAids aids, std::string_view phase, std::span<double> x,
                                std::vector<NewtonStepRecord>* trace,
                                const SolverOptions& options) {
  options_ = options;
  aids.limit_junctions = options_.junction_limiting;
  plain_run_ = aids.gmin == 0.0 && aids.source_scale == 1.0;
  SizeVectors();
  NewtonOutcome outcome;
  mna_->BeginRun(x);
  std::fill(dx_.begin(), dx_.end(), 0.0);
  ToleranceCheck update;
  update.index = 0;
  update.value = 1.0;  // no update yet: not settled
  bool last_clamped = false;
  for (int step = 1; step <= options_.max_newton_steps; ++step) {
    outcome.steps = step;
    const AssemblyOutcome assembled = AssembleHalving(x, aids, step > 1, &last_clamped);
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

// The law is exact up to the largest double, so a step can land where a junction's
// current is not a double (a forced current into a junction at 0 V asks for 2.6e9 V
// when junction limiting is off). Such a step is halved back toward its start: a
// damping of Newton's step, not a change of the law, and not a settled step (*halved).
AssemblyOutcome NewtonSolver::AssembleHalving(std::span<double> x, const AssemblyAids& aids,
                                              bool may_halve, bool* halved) {
  AssemblyOutcome assembled = mna_->Assemble(x, aids);
  for (int halving = 0; !assembled.finite && may_halve && halving < kOverflowHalvings; ++halving) {
    for (size_t i = 0; i < x.size(); ++i) {
      dx_[i] *= 0.5;
      x[i] -= dx_[i];
    }
    assembled = mna_->Assemble(x, aids);
    *halved = true;
  }
  return assembled;
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
  outcome.note = {steps, update, residual, step_taken};
  if (describe_converged_) outcome.detail = Describe(outcome.note);
  Polish(aids, x, update.ratio());
  return outcome;
}

std::string NewtonSolver::Describe(const ConvergedNote& note) const {
  return fmt::format(
      "converged in {} steps: worst |dx| at '{}' = {:.3g} <= {:.3g}{}, worst residual at "
      "'{}' = {:.3g} <= {:.3g}",
      note.steps, mna_->UnknownName(note.update.index), note.update.value, note.update.bound,
      note.step_taken ? "" : " (step not taken)", mna_->UnknownName(note.residual.index),
      note.residual.value, note.residual.bound);
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
  regularized_.assign(values.begin(), values.end());
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
  if (minus_f_.size() != size_) {
    minus_f_.resize(size_);  // each element written below before it is read
    row_tolerance_.resize(size_);
  }
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

void NewtonSolver::Polish(const AssemblyAids& aids, std::span<double> x, double last_ratio) {
  AssemblyAids exact = aids;
  exact.limit_junctions = false;
  const auto solve = [&] {
    NewtonOutcome ignored;
    return SolveStep(dx_, &ignored);
  };
  const auto apply = [&] {
    for (size_t i = 0; i < x.size(); ++i) x[i] = saved_x_[i] + dx_[i];
    const bool inside = !Clamp(x);
    const AssemblyOutcome assembled = mna_->Assemble(x, exact);
    return inside && assembled.finite;
  };
  polisher_.Run(*mna_, options_, *klu_, x, saved_x_, dx_, noise_, last_ratio, plain_run_, solve,
                apply);
}

std::vector<std::string> NewtonSolver::Unsettled(std::span<const double> x) const {
  std::vector<std::string> names = UnsettledUnknowns(*mna_, options_, dx_, x);
  for (int e : mna_->devices().LimitedElements()) {
    names.push_back(fmt::format("{} (junction step limited)", mna_->ElementName(e)));
  }
  return names;
}

}  // namespace knee::internal
