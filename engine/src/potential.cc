// The potential method: Newton directions of the MNA system and a line search on the
// network's co-content.
// The mathematics and its sources are in docs/solver.md, "The potential method".
#include "potential.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "device_kinds.h"
#include "knee/diode_law.h"

namespace knee::internal {
namespace {

bool AllFinite(std::span<const double> v) {
  return std::all_of(v.begin(), v.end(), [](double d) { return std::isfinite(d); });
}

}  // namespace

double StiffJunctionConductance(const Circuit& c, double factor) {
  double largest = 0.0;
  for (const Element& e : c.elements) largest = std::max(largest, OwnConductance(c, e));
  return factor * (largest > 0.0 && std::isfinite(largest) ? largest : 1.0);
}

PotentialSolver::PotentialSolver(MnaSystem* mna, LinearSolver* klu, const SolverOptions& options,
                                 int size, const PotentialTuning& tuning)
    : mna_(mna),
      klu_(klu),
      configured_(options),
      options_(options),
      tuning_(tuning),
      size_(static_cast<size_t>(size)) {}

// The working vectors are sized on the first Run, not at construction: a classic solve
// (the default) never runs this solver, and a million unknowns make them 32 MB.
void PotentialSolver::SizeVectors() {
  if (dx_.size() == size_) return;
  dx_.assign(size_, 0.0);
  step_.assign(size_, 0.0);
  base_.assign(size_, 0.0);
  last_step_.assign(size_, 0.0);
  noise_.assign(size_, 0.0);
  branch_dv_.assign(size_ - static_cast<size_t>(mna_->kcl_rows()), 0.0);
}

void PotentialSolver::ReleaseWorkspace() {
  for (std::vector<double>* v : {&dx_, &step_, &base_, &last_step_, &noise_, &branch_dv_}) {
    std::vector<double>().swap(*v);
  }
}

// The source equations hold at the last assembly (within their residual bound).
bool PotentialSolver::Feasible() const {
  const auto f = mna_->residual();
  for (int r = mna_->kcl_rows(); r < mna_->size(); ++r) {
    if (!(std::fabs(f[static_cast<size_t>(r)]) <=
          options_.abs_voltage_tol + mna_->RoundOffAllowance(r))) {
      return false;
    }
  }
  return true;
}

// Off the set where the sources hold (a cold start, or a warm start whose sources
// changed): one step onto it, taken whole (the source equations are linear, so the full
// step satisfies them; from then on every Newton step keeps them). Among the steps that
// do, this one is the smallest in the metric of a network in which every junction is a
// stiff conductance and every resistor keeps its own: the sources' voltages land on the
// resistors and the junctions keep their voltages, instead of a junction taking a whole
// source voltage and starting deep in its exponential. On return dx_ holds the step.
bool PotentialSolver::FeasibilityStep(std::span<double> x, NewtonOutcome* outcome) {
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  const auto f = mna_->residual();
  std::copy(f.begin(), f.end(), step_.begin());  // the assemblies below overwrite f
  // A stiffness far above every resistor can round the resistors away where junctions
  // join two nodes that only high resistances hold (a 1e9 S junction beside 1e-8 S): the
  // factorisation is then singular, and the step is tried with softer junctions. Any
  // positive stiffness gives a step onto the constraints; the stiffer, the closer it
  // keeps the junctions' voltages.
  AssemblyOutcome assembled;
  LinearStatus status = LinearStatus::kSingular;
  exact_factors_ = false;
  for (double g = stiff_;
       status == LinearStatus::kSingular && g >= stiff_ * tuning_.softest_feasibility; g *= 1e-3) {
    for (size_t i = 0; i < dx_.size(); ++i) dx_[i] = i < kcl ? 0.0 : -step_[i];
    AssemblyAids stiff;
    stiff.stiff_junction = g;
    stiff.gmin = g * tuning_.feasibility_shunt;
    assembled = mna_->Assemble(x, stiff);
    ++evaluations_;
    status = assembled.finite ? klu_->Factor(mna_->values()) : LinearStatus::kFatal;
    if (status == LinearStatus::kOk) status = klu_->Solve(dx_);
  }
  if (status == LinearStatus::kOk) {
    MapStep();
    return true;
  }
  outcome->exit = status == LinearStatus::kSingular ? NewtonExit::kSingular : NewtonExit::kFatal;
  outcome->detail = assembled.finite ? klu_->message() : "the starting point is not finite";
  return false;
}

bool PotentialSolver::SolveStep(NewtonOutcome* outcome) {
  // Fresh pivots at every step: conductances across a network span 1e-25 S to 1e15 S and
  // move by decades per step, so pivots chosen at another point can leave the direction
  // inaccurate beyond what the line search can resolve (KLU's pivot-growth test does not
  // catch all of it). The networks are small; a full factorisation costs little more.
  {
    const auto f = mna_->residual();
    for (size_t i = 0; i < dx_.size(); ++i) step_[i] = -f[i];  // -g, kept for the retries
  }
  LinearStatus status = LinearStatus::kSingular;
  exact_factors_ = false;
  if (shift_ == 0.0) {
    status = klu_->Factor(mna_->values());
    exact_factors_ = !floor_ && status == LinearStatus::kOk;
    if (status == LinearStatus::kOk) {
      std::copy(step_.begin(), step_.end(), dx_.begin());
      status = klu_->Solve(dx_);
      // Pivots KLU takes for nonzero (1e-300 S) can still overflow the direction: that
      // matrix is singular for this purpose (an infinite direction has no line search).
      if (status == LinearStatus::kOk && !AllFinite(dx_)) status = LinearStatus::kSingular;
    }
  }
  // A Hessian that is singular in floating point (junction conductances that underflow,
  // e.g. a node held only by reverse-biased junctions), or one whose direction gave no
  // usable step (shift_ > 0, see Run), is modified by adding mu to its diagonal:
  // (H + mu I) d = -g is still a descent direction, turning towards steepest descent as
  // mu grows, and the line search and the convergence tests stay those of the exact
  // potential (Newton's method with Hessian modification, Nocedal and Wright ch. 3.4,
  // recalled from memory). mu grows by 1e3 per try while the matrix stays singular.
  if (status == LinearStatus::kSingular && x_ != nullptr) {
    for (double mu = std::max(shift_, tuning_.first_shift);
         mu <= tuning_.last_shift && status == LinearStatus::kSingular; mu *= 1e3) {
      AssemblyAids modified;
      modified.gmin = mu;
      if (!mna_->Assemble(*x_, modified).finite) break;
      ++evaluations_;
      status = klu_->Factor(mna_->values());
      if (status != LinearStatus::kOk) continue;
      std::copy(step_.begin(), step_.end(), dx_.begin());
      status = klu_->Solve(dx_);
      if (status == LinearStatus::kOk && !AllFinite(dx_)) status = LinearStatus::kSingular;
    }
    AssemblyAids exact;
    exact.want_potential = true;
    exact.junction_floor = floor_;
    mna_->Assemble(*x_, exact);  // back to the exact model's residual at x
    ++evaluations_;
  }
  if (status == LinearStatus::kOk) {
    MapStep();
    return true;
  }
  outcome->exit = status == LinearStatus::kSingular ? NewtonExit::kSingular : NewtonExit::kFatal;
  outcome->detail = klu_->message();
  return false;
}

// The first assembly of a Run; false (with the outcome) where x is not finite.
bool PotentialSolver::Start(std::span<double> x, RunState* state, NewtonOutcome* outcome) {
  evaluations_ = 0;
  floor_ = false;
  shift_ = 0.0;
  mna_->BeginRun(x);
  AssemblyAids aids;
  aids.want_potential = true;
  aids.junction_floor = floor_;
  const AssemblyOutcome start = mna_->Assemble(x, aids);
  ++evaluations_;
  if (!start.finite || !std::isfinite(start.potential)) {
    outcome->exit = NewtonExit::kNonFinite;
    outcome->detail =
        fmt::format("the starting point gives element '{}' a non-finite value",
                    start.bad_element >= 0 ? mna_->ElementName(start.bad_element) : "?");
    return false;
  }
  state->potential = start.potential;
  state->potential_magnitude = start.potential_magnitude;
  state->base_log_current = start.max_log_current;
  state->update.index = 0;
  state->update.value = 1.0;  // no update yet: not settled
  std::fill(last_step_.begin(), last_step_.end(), 0.0);
  return true;
}

// The direction of step `step`: onto the sources' constraints when x is off them, else
// the Newton direction; false (with the outcome) when the linear solve fails.
bool PotentialSolver::Direction(bool feasible, int step, std::span<double> x,
                                NewtonOutcome* outcome) {
  if (!feasible) {
    std::copy(x.begin(), x.end(), base_.begin());
    if (!FeasibilityStep(x, outcome)) {
      outcome->detail = fmt::format("step {}: {}", step, outcome->detail);
      return false;
    }
  } else if (!SolveStep(outcome)) {
    outcome->detail = fmt::format("step {}: {}", step, outcome->detail);
    return false;
  }
  return true;
}

// branch_dv_ = A^T dv from the source rows of the Jacobian (their entries are the
// constant +-1 of the source equations).
void PotentialSolver::BranchChange() {
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  std::fill(branch_dv_.begin(), branch_dv_.end(), 0.0);
  const auto col_ptr = mna_->col_ptr();
  const auto rows = mna_->row_index();
  const auto values = mna_->values();
  for (size_t col = 0; col < kcl; ++col) {
    for (int p = col_ptr[col]; p < col_ptr[col + 1]; ++p) {
      const auto row = static_cast<size_t>(rows[static_cast<size_t>(p)]);
      if (row >= kcl) branch_dv_[row - kcl] += values[static_cast<size_t>(p)] * dx_[col];
    }
  }
}

// The Hessian modification for the next direction, from the step length t just taken.
// A short step means the exact Newton direction is dominated by a node that the
// Hessian barely holds (e.g. one joined to the rest only by reverse-biased
// junctions, whose conductance may be 1e-300 S): the next direction is then computed
// with every junction's conductance at least its zero-bias value Is/(n*Vt). That
// Hessian is still positive definite and at least the exact one, so the direction
// is still a descent direction (Newton's method with Hessian modification, Nocedal
// and Wright ch. 3.4, recalled from memory); the potential, the line search and the
// convergence tests stay those of the exact model. A full step switches it off again,
// so the last steps are exact Newton steps.
void PotentialSolver::AdaptHessian(double t, bool residual_passed, std::span<const double> x) {
  if (t < tuning_.tiny_step && !residual_passed && (t == 0.0 || floor_)) {
    // The direction gave no step (or a vanishing one, even with the junction floor)
    // although KCL does not hold: the next one is turned towards steepest descent.
    shift_ = shift_ == 0.0 ? tuning_.first_shift
                           : std::min(shift_ * tuning_.shift_growth, tuning_.last_shift);
  } else if (t > 0.0) {
    shift_ =
        shift_ / tuning_.shift_growth < tuning_.first_shift ? 0.0 : shift_ / tuning_.shift_growth;
  }
  SetFloor(t < tuning_.short_step, x);
}

// The update test of the step just taken (step_, scaled to its length).
ToleranceCheck PotentialSolver::UpdateTest(bool residual_passed, bool feasible,
                                           std::span<const double> x) {
  ToleranceCheck update = CheckUpdate(*mna_, options_, step_, x);
  // As in the classic loop (NewtonSolver::NoiseFloor): where the residual passed, the
  // part of the step that the residual's round-off alone causes is not a move.
  if (!update.passed() && residual_passed && feasible && NoiseFloor()) {
    update = CheckUpdate(*mna_, options_, step_, x, noise_);
  }
  // And a step that currents of the size of the residual's tolerance could cause
  // (|J^-1 t|) moves only loose nodes, which KCL at the tolerance does not fix: the run
  // ends where the residual passes, and the loose-node pass after it (loose_nodes.cc,
  // ResolveFaintNodes) settles or names them. Without this, Newton creeps along the
  // flat valley of a chain of saturated reverse junctions for thousands of steps.
  if (!update.passed() && residual_passed && feasible &&
      ToleranceSpread(*mna_, options_, *klu_, noise_)) {
    update = CheckUpdate(*mna_, options_, step_, x, noise_);
  }
  return update;
}

NewtonOutcome PotentialSolver::Run(std::span<double> x, std::vector<NewtonStepRecord>* trace) {
  return Run(x, trace, configured_);
}

NewtonOutcome PotentialSolver::Run(std::span<double> x, std::vector<NewtonStepRecord>* trace,
                                   const SolverOptions& options) {
  options_ = options;
  SizeVectors();
  NewtonOutcome outcome;
  RunState state;
  x_ = &x;  // for SolveStep's Hessian modification; only used during this call
  if (!Start(x, &state, &outcome)) return outcome;
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  for (int step = 1; step <= options_.max_newton_steps; ++step) {
    outcome.steps = step;
    const ToleranceCheck residual = CheckResidual(*mna_, options_);
    const ToleranceCheck& update = state.update;
    if (step > 1 && update.passed() && residual.passed()) {
      outcome.exit = NewtonExit::kConverged;
      outcome.detail = fmt::format(
          "potential method converged in {} steps ({} evaluations): worst |dx| at '{}' = "
          "{:.3g} <= {:.3g}, worst residual at '{}' = {:.3g} <= {:.3g}",
          step - 1, evaluations_, mna_->UnknownName(update.index), update.value, update.bound,
          mna_->UnknownName(residual.index), residual.value, residual.bound);
      Polish(x, update.ratio());
      return outcome;
    }
    const double max_residual = MaxAbs(mna_->residual(), kcl);
    // The step onto the sources' constraints is taken once, at the start; afterwards the
    // Newton system's source rows correct any drift of round-off size within each step.
    const bool feasible = step > 1 || Feasible();
    if (!Direction(feasible, step, x, &outcome)) return outcome;
    BranchChange();
    const StepChoice c = ChooseStep(state, residual, feasible, x);
    if (!c.ok && (!floor_ || shift_ < tuning_.last_shift)) {
      // No step along this direction: once more from the same point with the Hessian
      // modified, first by the junction floor, then by a growing diagonal shift (x holds
      // the last trial, so the point is restored first).
      std::copy(base_.begin(), base_.end(), x.begin());
      if (floor_) {
        shift_ = shift_ == 0.0 ? tuning_.first_shift : shift_ * tuning_.shift_growth;
        floor_ = false;  // SetFloor assembles the point again
      }
      SetFloor(true, x);
      continue;
    }
    if (!c.ok) {
      outcome.exit = NewtonExit::kStepLimit;
      outcome.detail = fmt::format(
          "step {}: the line search found no step that decreases the potential ({:.6g} W, "
          "slope {:.3g} W, last trial t = {:.3g})",
          step, c.before, c.slope0, c.t);
      return outcome;
    }
    AdaptHessian(c.t, residual.passed(), x);
    state.creeping = c.t == 1.0 && feasible && Repeats();
    // The update actually taken (the multipliers as in Evaluate).
    for (size_t i = 0; i < step_.size(); ++i) step_[i] *= i < kcl ? c.t : MultiplierFraction(c.t);
    state.potential = c.accepted.potential;
    state.potential_magnitude = c.accepted.potential_magnitude;
    state.base_log_current = c.accepted.max_log_current;
    state.update = UpdateTest(residual.passed(), feasible, x);
    if (!std::isfinite(update.value)) {
      outcome.exit = NewtonExit::kNonFinite;
      outcome.detail = fmt::format("step {}: the update of '{}' is not finite", step,
                                   mna_->UnknownName(update.index));
      return outcome;
    }
    if (trace != nullptr) Record(step, max_residual, state, c, trace);
  }
  outcome.exit = NewtonExit::kStepLimit;
  outcome.detail = "potential method: " + StepLimitDetail(*mna_, options_, state.update);
  return outcome;
}

void PotentialSolver::Record(int step, double max_residual, const RunState& state,
                             const StepChoice& c, std::vector<NewtonStepRecord>* trace) const {
  NewtonStepRecord record;
  record.step = step;
  record.max_update = MaxAbs(step_, step_.size());
  record.max_residual = max_residual;
  record.phase = c.phase;
  record.step_length = c.t;
  record.potential = c.before;
  record.potential_change = state.potential - c.before;
  record.potential_roundoff = c.RoundOff(c.accepted);
  record.line_search_trials = c.trials;
  trace->push_back(std::move(record));
}

// noise_ = |J^-1 a| with the factorisation of the last Newton direction (convergence.h).
bool PotentialSolver::NoiseFloor() { return RoundingNoise(*mna_, *klu_, noise_); }

// step_ = the direction dx_ (island coordinates) as node voltages and source currents.
void PotentialSolver::MapStep() {
  std::copy(dx_.begin(), dx_.end(), step_.begin());
  mna_->ToNodeSpace(step_);
}

// Switches the Hessian modification on or off; the Jacobian at x is assembled again when
// it changes (the residual and the potential do not change).
void PotentialSolver::SetFloor(bool on, std::span<const double> x) {
  if (on == floor_) return;
  floor_ = on;
  AssemblyAids aids;
  aids.want_potential = true;
  aids.junction_floor = floor_;
  mna_->Assemble(x, aids);
  ++evaluations_;
}

// Full Newton steps after convergence (exact Hessian, no shift), as NewtonSolver::Polish.
void PotentialSolver::Polish(std::span<double> x, double last_ratio) {
  shift_ = 0.0;
  SetFloor(false, x);
  const auto kcl = static_cast<size_t>(mna_->kcl_rows());
  const auto solve = [&] {
    NewtonOutcome ignored;
    return SolveStep(&ignored);
  };
  // x + step_ from base_, assembled.
  const auto apply = [&] {
    bool inside = true;
    for (size_t i = 0; i < x.size(); ++i) {
      x[i] = base_[i] + step_[i];
      if (i < kcl && !(std::fabs(x[i]) <= voltage_bound_)) inside = false;
    }
    const AssemblyOutcome assembled = mna_->Assemble(x, AssemblyAids{});
    return inside && assembled.finite;
  };
  polisher_.Run(*mna_, options_, *klu_, x, base_, step_, noise_, last_ratio, /*may_mask=*/true,
                solve, apply);
}

std::vector<std::string> PotentialSolver::Unsettled(std::span<const double> x) const {
  return UnsettledUnknowns(*mna_, options_, step_, x);
}

}  // namespace knee::internal
