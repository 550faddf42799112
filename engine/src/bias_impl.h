// The bias solver's state and its stages (docs/architecture.md): the screen before any
// step (screen.cc), the strategies that look for a solution (bias.cc, continuation.cc),
// and the post-solve stages that check and settle it (post_solve.cc, loose_nodes.cc).
#pragma once

#include <cmath>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "adjoint.h"
#include "check.h"
#include "disjoint_set.h"
#include "forced_junctions.h"
#include "klu_solver.h"
#include "knee/solver.h"
#include "mna.h"
#include "newton.h"
#include "potential.h"
#include "thermal.h"
#include "tuning.h"
#include "undetermined.h"

namespace knee {

namespace internal {

// The circuit's numbers without names or source locations (circuit_numbers.cc).
Circuit NumbersOf(const Circuit& c);
// to = NumbersOf(from), copying only the numbers when both have as many nodes, parts and
// elements (a sweep point). Returns true when at most the values of voltage sources
// changed, each to a finite number (what a sweep of a supply does at every point).
bool AssignValues(const Circuit& from, Circuit* to);

}  // namespace internal

struct BiasSolver::Impl {
  // The caller's circuit of Create() or of the last UpdateValues(); no copy is kept (a
  // million-element circuit would be held twice).
  const Circuit* circuit;
  // The numbers of that circuit (NumbersOf), kept from the first UpdateValues() on: a
  // sweep point's circuit is compared with them to skip the classification when only
  // sources changed. A single bias point never needs them.
  std::optional<Circuit> last_numbers;
  SolverOptions options;
  internal::SolveTuning tuning;  // derived from options (tuning.h)
  internal::MnaSystem mna;
  internal::KluSolver klu;
  // `klu` and `probe` read mna's pattern (KluSolver::AnalyzeBorrowed): every rebuild of
  // mna analyses `klu` again and resets `probe`.
  // LooseNodes' own factors of the exact Jacobian, made on first need: fresh pivots in
  // `klu` would make every later refactor of the run depend on where that check fell
  // (a sweep's output would then depend on how its points are shared among threads).
  std::optional<internal::KluSolver> probe;
  internal::NewtonSolver newton;
  internal::PotentialSolver potential;
  // Per circuit values (set at Create and UpdateValues): why the network is not
  // monotone, and why a monotone one has no solution, when so.
  std::optional<std::string> non_monotone;
  // A bound on the undetermined-node test's row sums per ampere of tolerance (undetermined.h,
  // kUndeterminedScreenShare): the sum of all resistances times the count of node unknowns,
  // when resistors and voltage sources alone tie every node to gnd (TieResistively); +inf
  // otherwise or for a network that is not monotone.
  double tied_resistance = HUGE_VAL;
  internal::DisjointSet tie_sets{0};
  std::optional<std::string> unbounded;
  // Junctions that voltage sources alone hold (their current is checked at every Solve,
  // against the sources' values then).
  std::vector<internal::ForcedJunction> forced;
  // A part whose saturation current at its temperature is beyond any diode's.
  std::optional<std::string> absurd_saturation;
  // Resistance-free junctions on loops of sources and such junctions (their solved
  // currents are checked in Conclude).
  std::vector<internal::LoopJunction> loop_junctions;
  // The SourceGraphKey that `forced` and `loop_junctions` were found for (Classify).
  std::vector<int> source_graph_key, graph_key_scratch;
  bool source_graph_read = false;
  std::vector<double> loop_current;
  std::vector<double> x;          // working unknowns
  std::vector<double> saved;      // x before a rung, restored when the rung fails
  std::vector<double> converged;  // unknowns of the last converged solve
  std::vector<double> node_residual, node_allowance, node_flow;  // Verify's, with islands
  std::vector<double> spread;                                    // LooseNodes' |J^-1 t|
  internal::UndeterminedTest undetermined;                       // NameUndetermined's
  // Whether klu holds the exact Jacobian's factors from the run that converged (the
  // solver's exact_factors()), which LooseNodes may then use as they are.
  bool factors_exact = false;
  bool rerooted = false;       // mna's islands are rooted by a solution (RerootIslands)
  double junction_span = 0.0;  // V, the junctions' span (ReadElements)
  bool trace_on = false;
  bool single_point = false;  // BiasSolver::set_single_point
  // BiasSolver::set_describe_converged; when off, a converged warm-start run leaves its
  // numbers in deferred_note and the detail empty until a later stage needs the text
  // (DescribeDeferred).
  bool describe_converged = true;
  std::optional<internal::ConvergedNote> deferred_note;
  std::vector<NewtonStepRecord> trace;
  // Whether the last Solve() converged (Sensitivity() differentiates only that point),
  // and the adjoint method's buffers, made on first use.
  bool last_converged = false;
  std::unique_ptr<internal::AdjointWorkspace> adjoint;
  // The caller's starting point of the current Solve (empty or of another size: a cold
  // start from 0 V).
  std::span<const double> start;
  // Self-heating (thermal.cc): set when some diode is heated and options.isothermal is
  // false; `circuit` then points at its copy with the junction temperatures of the
  // iterate.
  std::unique_ptr<internal::ThermalState> thermal;

  Impl(const Circuit& c, const SolverOptions& o)
      : circuit(&c),
        options(o),
        tuning(internal::SolveTuning::From(o)),
        mna(c),
        newton(&mna, &klu, o, mna.size()),
        potential(&mna, &klu, o, mna.size(), tuning.potential) {
    Resize();
    Classify();
  }

  // New values (BiasSolver::UpdateValues without self-heating); a bias point at the
  // junction temperatures `circuit` holds; the adjoint gradient of the last one.
  void Update(const Circuit& c);
  SolveSummary SolveFixed(Solution* solution, std::span<const double> from, bool allow_aids);
  Status Gradient(std::span<const WeightedQuantity> quantity, CircuitGradient* gradient);

  // --- self-heating (thermal.cc) ---
  void StartThermal(const Circuit& c);
  void UpdateThermal(const Circuit& c);
  SolveSummary SolveHeated(Solution* solution, std::span<const double> from, bool allow_aids);
  std::span<const double> ThermalUnknowns() const;
  int ThermalCount() const;
  // One bias point with every heated junction at temps[i] (degC).
  SolveSummary SolveAtTemps(std::span<const double> temps, std::span<const double> estart,
                            bool allow_aids, Solution* solution);
  // Thermal Newton at coupling s from thermal->temp (and the electrical start); true when
  // the balance converged, with *last the summary of its last bias point.
  bool RunBalance(double s, bool allow_aids, Solution* solution, SolveSummary* last,
                  int* iterations);
  // J = I - s C dP/dT at the last bias point into thermal->jacobian; false when a
  // gradient cannot be computed.
  bool ThermalJacobian(double s);
  // The single heated diode's next balance above temp (degC) up to the scan limit, or NaN.
  double SeekOtherBalance(double temp);

  // --- set-up (screen.cc) ---
  void Classify();
  void ReadElements();
  void TieResistively();
  void SetVoltageBound();
  void Resize() {
    const auto n = static_cast<size_t>(mna.size());
    x.assign(n, 0.0);
    saved.clear();  // sized by its first use (an aid's rung, the settling of faint nodes)
    converged.clear();
  }
  std::optional<std::string> Analyze() {
    if (mna.size() == 0) return std::string("the circuit has no unknowns to solve for");
    if (klu.AnalyzeBorrowed(mna.size(), mna.col_ptr(), mna.row_index()) !=
        internal::LinearStatus::kOk) {
      return "cannot order the circuit matrix: " + klu.message();
    }
    return std::nullopt;
  }
  // The MNA system (and everything that holds its pattern) built anew: with each island
  // rooted at the member of largest weight (RerootIslands), or as Create() built it.
  void Rebuild(std::span<const double> node_weight);

  // --- stage 1, the screen (screen.cc) ---
  // Clears the last solve's state and sets the bound of the node voltages.
  void BeginSolve(std::span<const double> start_point);
  // Whether the network is decided before any step (no method applies, no solution, or
  // a junction out of range): then *s says so.
  bool Screen(SolveSummary* s) const;

  // --- stage 2, the strategies (bias.cc, continuation.cc) ---
  // How the last strategy that ran ended, and which solver ran it.
  struct Ending {
    internal::NewtonExit exit = internal::NewtonExit::kStepLimit;
    bool by_potential = false;
  };
  bool warm() const { return start.size() == x.size(); }
  // x = the caller's start, or 0 V.
  void ResetStart();
  internal::NewtonOutcome Run(const internal::AssemblyAids& aids, std::string_view phase,
                              SolveSummary* s) {
    internal::NewtonOutcome out = newton.Run(aids, phase, x, trace_on ? &trace : nullptr);
    s->newton_steps += out.steps;
    return out;
  }
  std::optional<Ending> WarmStartNewton(SolveSummary* s);
  std::optional<Ending> PotentialMethod(SolveSummary* s, std::string* log);
  Ending ClassicLadder(SolveSummary* s, bool allow_aids, std::string log);
  bool GminLadder(SolveSummary* s, std::string* log);
  bool SourceLadder(SolveSummary* s, std::string* log);

  // --- stage 3, post-solve (post_solve.cc, loose_nodes.cc) ---
  // The closing of every strategy: a failed one says what still moved; a converged one is
  // settled, verified on the exact model, filled in and kept for warm starts (Conclude).
  void Finish(const Ending& end, SolveSummary* s, Solution* solution);
  void Conclude(SolveSummary* s, Solution* solution);
  void RerootIslands(SolveSummary* s);
  void ResolveFaintNodes(SolveSummary* s);
  // The nodes that currents of the size of the tolerance (rounding = false) or of the
  // residual's round-off allowance (rounding = true) move by more than the voltage
  // tolerance; *scale is the factor on the current tolerance that would fix them.
  std::vector<int> LooseNodes(const SolverOptions& o, bool rounding, double* scale);
  std::vector<int> UntiedNodes(const SolverOptions& o, bool rounding);
  void Verify(SolveSummary* s);
  // Puts the deferred warm-start detail in front of s->detail (a verification failure
  // appends to it); the text is then what it is with describe_converged on.
  void DescribeDeferred(SolveSummary* s);
  // A verified answer in which a junction that only sources and junctions limit carries
  // more than any diode could is out of range (forced_junctions.h).
  void CheckLoopJunctions(SolveSummary* s);
  void Fill(Solution* solution) const;
  // Frees the vectors that only the iterations and the loose-node test use (each is
  // sized again on its next use).
  void ReleaseIterationWorkspaces();
  // Frees KLU's symbolic and numeric objects and the MNA's assembly arrays: what only a
  // later solve or gradient reads, which RestoreMatrix() makes again (set_single_point).
  void ReleaseMatrix();
  void RestoreMatrix() {
    if (!mna.buffers_released()) return;
    mna.RestoreBuffers();
    const auto problem = Analyze();
    KNEE_CHECK(!problem);  // the same pattern was analysed before its release
  }
  // The nodes a verified answer leaves undetermined (undetermined.h), from the exact
  // Jacobian that Verify assembled at x.
  void NameUndetermined(SolveSummary* s) {
    if (s->status != SolveStatus::kConverged) return;
    // The test's row sums cannot exceed t * tied_resistance: far below the threshold they
    // clear every node, and the test (a solve per point) would name none.
    if (options.abs_current_tol * tied_resistance <=
        internal::kUndeterminedScreenShare * kUndeterminedVolts) {
      return;
    }
    for (int u : undetermined.Run(*circuit, mna, x, options, klu, factors_exact, probe)) {
      s->undetermined_nodes.push_back(mna.UnknownName(u));
    }
  }
};

}  // namespace knee
