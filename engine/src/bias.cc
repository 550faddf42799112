// BiasSolver: the stages of a bias point, top-down (docs/architecture.md). The screen
// decides what the network's structure alone decides (screen.cc); the strategies look for
// a solution, in this order where they apply: plain Newton from a warm start, the
// potential method, the classic ladder (plain Newton, then gmin stepping, then source
// stepping, each followed by a plain Newton run on the exact model); the post-solve
// stages settle, verify and fill in what a strategy found (post_solve.cc).
#include <fmt/format.h>

#include <algorithm>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "bias_impl.h"
#include "check.h"
#include "knee/sensitivity.h"
#include "knee/solver.h"

namespace knee {

using internal::AssemblyAids;
using internal::MnaSystem;
using internal::NewtonExit;
using internal::NewtonOutcome;
using internal::NewtonSolver;

namespace {

Diagnostic MessageOnly(std::string message) {
  Diagnostic d;
  d.message = std::move(message);
  return d;
}

}  // namespace

Result<std::unique_ptr<BiasSolver>> BiasSolver::Create(const Circuit& circuit,
                                                       const SolverOptions& options) {
  if (auto problem = Validate(options)) return MessageOnly(*problem);
  auto impl = std::make_unique<Impl>(circuit, options);
  if (auto problem = impl->Analyze()) return MessageOnly(*problem);
  if (!options.isothermal) impl->StartThermal(circuit);
  return std::unique_ptr<BiasSolver>(new BiasSolver(std::move(impl)));
}

BiasSolver::BiasSolver(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
BiasSolver::~BiasSolver() = default;

void BiasSolver::UpdateValues(const Circuit& circuit) {
  Impl& m = *impl_;
  if (m.thermal) {
    m.UpdateThermal(circuit);
    return;
  }
  m.Update(circuit);
}

void BiasSolver::Impl::Update(const Circuit& c) {
  Impl& m = *this;
  m.last_converged = false;  // the last solution is not one of these values
  // Neither classification depends on the value of a voltage source, except through its
  // finiteness: a sweep of a supply skips both (a max-flow over the network per point).
  // The first update has nothing to compare with and classifies again.
  bool sources_only = false;
  if (m.last_numbers) {
    sources_only = internal::AssignValues(c, &*m.last_numbers);
  } else {
    m.last_numbers = internal::NumbersOf(c);
  }
  m.circuit = &c;
  if (!sources_only || m.non_monotone) m.Classify();
  // sources_only: every element kept its kind, nodes and part since the last update,
  // whose structure the MNA system matched (or was rebuilt for), so it still matches.
  if (sources_only || m.mna.StructureMatches(c)) {
    m.mna.UpdateValues(c);
    return;
  }
  // The structure changed: the unknowns and the pattern are rebuilt (and warm starts of
  // the old size are ignored).
  m.mna = MnaSystem(c);
  m.newton = NewtonSolver(&m.mna, &m.klu, m.options, m.mna.size());
  m.potential =
      internal::PotentialSolver(&m.mna, &m.klu, m.options, m.mna.size(), m.tuning.potential);
  m.probe.reset();  // its symbolic analysis is of the old pattern
  m.Resize();
  const auto problem = m.Analyze();
  KNEE_CHECK(!problem);  // the same nodes and elements were analysed at Create()
}

SolveSummary BiasSolver::Solve(Solution* solution, std::span<const double> start, bool allow_aids) {
  if (impl_->thermal) return impl_->SolveHeated(solution, start, allow_aids);
  return impl_->SolveFixed(solution, start, allow_aids);
}

SolveSummary BiasSolver::Impl::SolveFixed(Solution* solution, std::span<const double> from,
                                          bool allow_aids) {
  Impl& m = *this;
  m.BeginSolve(from);
  SolveSummary s;
  if (m.Screen(&s)) return s;
  std::string log;
  std::optional<Impl::Ending> end = m.WarmStartNewton(&s);
  if (!end) end = m.PotentialMethod(&s, &log);
  if (!end) end = m.ClassicLadder(&s, allow_aids, std::move(log));
  m.Finish(*end, &s, solution);
  return s;
}

void BiasSolver::Impl::ResetStart() {
  if (warm()) {
    std::copy(start.begin(), start.end(), x.begin());
  } else {
    std::fill(x.begin(), x.end(), 0.0);
  }
}

// From a warm start (a neighbouring sweep point's solution) Newton is already in its
// quadratic region: auto tries plain Newton first there, since the potential method's
// fresh factorisation at every step and its step onto the sources' constraints are the
// larger part of a sweep's time there (docs/solver.md). A failed run leaves the decision
// to the strategies after it.
std::optional<BiasSolver::Impl::Ending> BiasSolver::Impl::WarmStartNewton(SolveSummary* s) {
  if (!(options.method == SolverMethod::kAuto && warm() && !non_monotone)) return std::nullopt;
  ResetStart();
  // A failed run's detail is never shown (the strategies after it report), so only a
  // converged one's text is ever deferred.
  newton.set_describe_converged(describe_converged);
  const NewtonOutcome out = Run(AssemblyAids{}, "newton (warm start)", s);
  newton.set_describe_converged(true);
  if (out.exit != NewtonExit::kConverged) return std::nullopt;
  s->method = SolverMethod::kClassic;
  if (describe_converged) {
    s->detail = "newton from the warm start: " + out.detail;
  } else {
    deferred_note = out.note;
  }
  return Ending{out.exit, false};
}

// The potential method on a monotone network (auto and potential); under auto a failure
// hands over to the classic ladder with its log.
std::optional<BiasSolver::Impl::Ending> BiasSolver::Impl::PotentialMethod(SolveSummary* s,
                                                                          std::string* log) {
  const SolverMethod method = options.method;
  if (method == SolverMethod::kClassic || non_monotone) return std::nullopt;
  s->method = SolverMethod::kPotential;
  ResetStart();
  potential.set_stiff_conductance(
      internal::StiffJunctionConductance(*circuit, tuning.potential.stiff_factor));
  const NewtonOutcome run = potential.Run(x, trace_on ? &trace : nullptr);
  s->newton_steps += run.steps;
  if (run.exit == NewtonExit::kConverged || method == SolverMethod::kPotential) {
    s->detail = run.detail;
    return Ending{run.exit, true};
  }
  *log = "potential: " + run.detail + "; then the classic ladder: ";
  return std::nullopt;
}

// Plain Newton, then each enabled aid in turn while it has not converged: the aid's
// ladder, then a plain Newton run on the exact model from where the ladder ended.
BiasSolver::Impl::Ending BiasSolver::Impl::ClassicLadder(SolveSummary* s, bool allow_aids,
                                                         std::string log) {
  s->method = SolverMethod::kClassic;
  ResetStart();
  NewtonOutcome out = Run(AssemblyAids{}, "newton", s);
  log += "newton: " + out.detail;
  const auto try_aid = [&](bool enabled, const char* name, auto ladder) {
    if (!enabled || !allow_aids || out.exit == NewtonExit::kConverged ||
        out.exit == NewtonExit::kFatal)
      return;
    ResetStart();
    if (!(this->*ladder)(s, &log)) return;
    s->aids.push_back(name);
    out = Run(AssemblyAids{}, "newton (no aid)", s);
    log += fmt::format("; after {}: {}", name, out.detail);
  };
  try_aid(options.gmin_stepping, "gmin stepping", &Impl::GminLadder);
  try_aid(options.source_stepping, "source stepping", &Impl::SourceLadder);
  s->detail = std::move(log);
  return Ending{out.exit, false};
}

Status BiasSolver::Sensitivity(std::span<const WeightedQuantity> quantity,
                               CircuitGradient* gradient) {
  if (impl_->thermal) {
    return MessageOnly(
        "sensitivities of a circuit with self-heating are not computed (docs/thermal.md); "
        "add --isothermal for the derivatives at fixed junction temperatures");
  }
  return impl_->Gradient(quantity, gradient);
}

Status BiasSolver::Impl::Gradient(std::span<const WeightedQuantity> quantity,
                                  CircuitGradient* gradient) {
  Impl& m = *this;
  if (!m.last_converged || m.converged.size() != m.x.size()) {
    return MessageOnly("no converged solution to differentiate");
  }
  m.RestoreMatrix();  // its factors are gone after a single point: the adjoint's own serve
  if (!m.adjoint) m.adjoint = std::make_unique<internal::AdjointWorkspace>();
  std::string problem = internal::ComputeSensitivity(*m.circuit, m.mna, m.klu, m.factors_exact,
                                                     m.converged, quantity, *m.adjoint, gradient);
  if (!problem.empty()) return MessageOnly(std::move(problem));
  return Done{};
}

// A heated circuit's unknowns end with the junction temperatures of its heated diodes
// (thermal.h), so that a sweep's warm start carries them too.
std::span<const double> BiasSolver::unknowns() const {
  return impl_->thermal ? impl_->ThermalUnknowns() : impl_->converged;
}
int BiasSolver::unknown_count() const {
  return impl_->mna.size() + (impl_->thermal ? impl_->ThermalCount() : 0);
}
void BiasSolver::set_trace(bool on) { impl_->trace_on = on; }
void BiasSolver::set_describe_converged(bool on) { impl_->describe_converged = on; }
void BiasSolver::set_single_point(bool on) { impl_->single_point = on; }
const std::vector<NewtonStepRecord>& BiasSolver::trace() const { return impl_->trace; }

}  // namespace knee
