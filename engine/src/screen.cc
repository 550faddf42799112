// Stage 1, the screen: what is known of the network before any step (its class, a
// structural absence of a solution, junctions out of range), and the bound that contains
// every node voltage of a solution.
#include <algorithm>
#include <cmath>

#include "bias_impl.h"
#include "check.h"
#include "device_kinds.h"
#include "knee/diode_law.h"

namespace knee {

// The most voltage the junctions can hold, summed: each junction's law spans at most
// `exponents` thermal scales on either side (beyond it the exponential is 0 or
// above 1e300 A), or from zero bias up to where its term leaves the doubles when that is
// further (ln(area*Is(T)) of -3000 at 4 K), plus the breakdown voltage. With the sources' volts and
// the current sources' amps times every resistance, it bounds |node voltage| in a network of
// increasing laws (a node above that bound would have every current flowing out of it),
// in the manner of the maximum principle for resistor networks (common practice, no
// source); the clamp uses it with a wide margin.
void BiasSolver::Impl::Classify() {
  ReadElements();
  unbounded.reset();
  if (!non_monotone) unbounded = internal::FindUnboundedCut(*circuit);
  // A change of numbers alone (a spread sample's draws) leaves the graph of sources and
  // resistance-free junctions, and so both of its readings, as they were. Its key is kept
  // from the first update on, as last_numbers is: a single bias point never compares it
  // (16 bytes a junction without series resistance).
  const bool keyed = last_numbers.has_value();
  if (keyed) {
    internal::SourceGraphKey(*circuit, &graph_key_scratch);
    if (source_graph_read && graph_key_scratch == source_graph_key) return;
    source_graph_key.swap(graph_key_scratch);
  }
  forced = internal::FindForcedJunctions(*circuit);
  loop_junctions = internal::LoopJunctions(*circuit);
  source_graph_read = keyed;
}

// The three readings of each element's own numbers (internal::NonMonotoneReason,
// internal::OutOfRangeSaturation and the span above, each the first or the sum in element
// order) in one pass, so that a junction's constants at its temperature (a log and an exp
// each) are computed once per classification.
void BiasSolver::Impl::ReadElements() {
  using internal::device::Diode;
  non_monotone.reset();
  absurd_saturation.reset();
  const double exponents = tuning.bound.junction_exponents;
  double span = 0.0;
  for (const Element& e : circuit->elements) {
    if (e.kind == ElementKind::kDiode && Diode::HasPart(*circuit, e)) {
      const DiodeConstants d = Diode::ConstantsOf(*circuit, e);
      if (!non_monotone) non_monotone = Diode::NonMonotone(*circuit, e, d);
      if (!absurd_saturation) absurd_saturation = internal::OutOfRangeSaturation(*circuit, e, d);
      Diode::AddVoltageSpan(d, exponents, &span);
    } else {
      if (!non_monotone) non_monotone = internal::NonMonotoneElement(*circuit, e);
      internal::AddVoltageSpan(*circuit, e, exponents, &span);
    }
  }
  junction_span = std::isfinite(span) ? span : 0.0;
  TieResistively();
}

// tied_resistance (bias_impl.h): the sum of every resistance times the count of node
// unknowns, when resistors and voltage sources join every node to gnd in a monotone
// network. The joining is only looked at when that product could clear the test.
void BiasSolver::Impl::TieResistively() {
  tied_resistance = HUGE_VAL;
  if (non_monotone) return;
  double sum = 0.0;
  for (const Element& e : circuit->elements) {
    if (e.kind == ElementKind::kResistor) sum += e.value;
  }
  const double bound = sum * static_cast<double>(circuit->nodes.size() - 1);
  if (!(options.abs_current_tol * bound <=
        internal::kUndeterminedScreenShare * kUndeterminedVolts)) {
    return;
  }
  tie_sets.Reset(circuit->nodes.size());
  size_t joined = 0;
  for (const Element& e : circuit->elements) {
    if (e.kind != ElementKind::kResistor && e.kind != ElementKind::kVoltageSource) continue;
    if (tie_sets.Join(e.node_a, e.node_b)) ++joined;
  }
  // n nodes form one set after n - 1 successful joins.
  if (joined + 1 == circuit->nodes.size()) tied_resistance = bound;
}

// A bound on |node voltage| for the classic loop's clamp (newton.h): the sources'
// part is recomputed at every Solve (a sweep of a supply changes it), the junctions'
// part only with the parts and temperatures.
void BiasSolver::Impl::SetVoltageBound() {
  double volts = 0.0, amps = 0.0, ohms = 0.0;
  for (const Element& e : circuit->elements) {
    const auto share = internal::BoundShareOf(*circuit, e);
    volts += share.volts;
    amps += share.amps;
    ohms += share.ohms;
  }
  const double bound =
      tuning.bound.margin * (volts + amps * ohms + junction_span) + tuning.bound.floor;
  newton.set_voltage_bound(bound);
  potential.set_voltage_bound(bound);
}

void BiasSolver::Impl::Rebuild(std::span<const double> node_weight) {
  mna = internal::MnaSystem(*circuit, node_weight);
  newton = internal::NewtonSolver(&mna, &klu, options, mna.size());
  potential = internal::PotentialSolver(&mna, &klu, options, mna.size(), tuning.potential);
  probe.reset();
  factors_exact = false;
  const auto problem = Analyze();
  KNEE_CHECK(!problem);  // the same nodes and elements were analysed at Create()
  SetVoltageBound();
}

// Every Solve starts from the roots of Create() (RerootIslands re-roots only for the
// solve that needed it), so that no result depends on the points solved before it.
void BiasSolver::Impl::BeginSolve(std::span<const double> start_point) {
  trace.clear();
  last_converged = false;
  deferred_note.reset();
  if (rerooted) {
    Rebuild({});
    rerooted = false;
  }
  RestoreMatrix();
  SetVoltageBound();
  start = start_point;
}

bool BiasSolver::Impl::Screen(SolveSummary* s) const {
  // The potential method for monotone networks (docs/solver.md, "The potential method").
  s->unique = !non_monotone;
  const SolverMethod method = options.method;
  if (method == SolverMethod::kPotential && non_monotone) {
    s->method = SolverMethod::kPotential;
    s->detail = "the potential method needs a monotone network: " + *non_monotone;
    return true;
  }
  // A monotone network with no solution is found by its topology, whichever method was
  // asked for: the classic ladder would otherwise iterate to its limits and end without
  // the reason.
  const SolverMethod named =
      method == SolverMethod::kClassic ? SolverMethod::kClassic : SolverMethod::kPotential;
  if (!non_monotone && unbounded) {
    s->method = named;
    s->unique = false;
    s->status = SolveStatus::kNoSolution;
    s->detail = *unbounded;
    return true;
  }
  // A junction across sources with no resistance carries whatever the law gives at the
  // sources' voltage: beyond any diode (or the doubles) it is said so before any step,
  // instead of a number no circuit produces (3.3e70 A for 1e-14 A across 5 V).
  std::optional<std::string> problem = absurd_saturation;
  if (!problem) problem = internal::ForcedJunctionProblem(*circuit, forced);
  if (problem) {
    s->method = named;
    s->unique = false;
    s->status = SolveStatus::kOutOfRange;
    s->detail = std::move(*problem);
    return true;
  }
  return false;
}

}  // namespace knee
