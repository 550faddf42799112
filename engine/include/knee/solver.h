// The DC bias solver: modified nodal analysis, Newton-Raphson with junction limiting,
// and a bounded ladder of convergence aids. See docs/solver.md.
#pragma once

#include <limits>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/result.h"

namespace knee {

struct WeightedQuantity;  // knee/sensitivity.h
struct CircuitGradient;   // knee/sensitivity.h

// Which bias solver runs (docs/solver.md, "The potential method").
enum class SolverMethod {
  // The potential method when the network is monotone (every resistor > 0, every diode
  // law increasing: all of knee's devices as the contract defines them), else classic.
  // If the potential method stops without an answer for a reason other than "no
  // solution exists", the classic ladder runs after it.
  kAuto,
  // Newton directions of the MNA system with a line search on the network's co-content
  // (a convex function; Millar 1951), without limiting, gmin or source stepping.
  // Monotone networks only. In theory it converges on every monotone network that has a
  // solution; in floating point it can end at its step limit on rare networks
  // (docs/solver.md, "Known gaps"), which kAuto hands to the ladder.
  kPotential,
  // Plain Newton with junction limiting, then the aid ladder (gmin, source stepping).
  kClassic,
};
const char* ToString(SolverMethod method);  // "auto", "potential", "classic"

// Every field has its default and unit beside it; Validate() holds all the rules.
struct SolverOptions {
  // Which solver runs; must be one of the SolverMethod values. kAuto: the potential
  // method on monotone networks (a unique solution, found from any start), the classic
  // ladder elsewhere and after a potential-method failure (docs/solver.md).
  SolverMethod method = SolverMethod::kAuto;
  // Newton stops when, for every unknown, |dx| <= abs_voltage_tol + rel_tol * |x|
  // (branch-current unknowns use abs_current_tol instead of abs_voltage_tol) AND the KCL
  // residual of every node is <= abs_current_tol + rel_tol * (largest current magnitude
  // flowing into that node). Every residual bound (here and in verification) also allows
  // for floating-point evaluation: 16 eps times the sum of the magnitudes of the terms
  // of that residual (docs/solver.md, "Round-off allowance").
  double abs_voltage_tol = 1e-6;   // V, > 0
  double abs_current_tol = 1e-12;  // A, > 0
  double rel_tol = 1e-6;           // dimensionless, in (0, 1e-2]
  int max_newton_steps = 200;      // per Newton run (one rung of the aid ladder), >= 1
  bool junction_limiting = true;   // limit each junction-voltage update per step

  // The aid ladder, tried in order when plain Newton fails. The reported solution is
  // always a final plain Newton run on the exact model with no aid left in it.
  bool gmin_stepping = true;
  double gmin_start = 1e-2;   // S, shunt from every node to gnd at the first rung
  double gmin_factor = 10.0;  // gmin divided by this at each rung, > 1
  double gmin_stop = 1e-14;   // S, last rung before removing the shunt altogether
  bool source_stepping = true;
  int source_steps = 20;  // initial number of equal source ramp steps, >= 1

  // Verification of a reported solution: the largest KCL residual (A) must be at most
  // verify_current_tol + rel_tol * (largest branch current magnitude at that node).
  double verify_current_tol = 1e-9;  // A, > 0

  // Self-heating (docs/thermal.md): false solves the junction temperatures of heated
  // diodes (a part with thermal_res, or a diode on a heatsink) with the node voltages;
  // true keeps every junction at its own temp= or the ambient, as if no diode were heated.
  bool isothermal = false;
  // With a single heated diode: after the balance is found, scan its junction temperature
  // upward (to 400 C, docs/thermal.md) for another balance and report it in
  // SolveSummary::other_balance_temp. Costs a bias point per 5 K; knee bias turns it on.
  bool seek_other_balance = false;
};

// Returns a message naming the field, its value and the rule broken, or nothing.
std::optional<std::string> Validate(const SolverOptions& options);

// How a solve ended. Only kConverged means the node voltages are usable.
enum class SolveStatus {
  kConverged,           // usable: converged and verified on the exact model
  kNoConvergence,       // not usable: every rung of the aid ladder ran out of steps
  kSingularMatrix,      // not usable: the Jacobian stayed singular
  kNonFinite,           // not usable: a device produced a non-finite value
  kVerificationFailed,  // not usable: converged, but the KCL residual check failed
  // Not usable: the network has no DC solution (a set of nodes into which current
  // sources push more current than the reverse-biased diodes leaving it can carry, so
  // the potential is unbounded below); the detail names those elements.
  kNoSolution,
  // Not usable: the answer is beyond the model: a junction that voltage sources alone
  // hold carries more than any diode can (or more than a double holds); the detail says
  // which junction, across which sources, and the current it would carry.
  kOutOfRange,
  // Not usable: no thermal balance exists (docs/thermal.md, "Thermal runaway"): the
  // dissipation of heated diodes grows with their temperature faster than their thermal
  // path removes it; the detail names the diode, the temperature where the balance is
  // lost and the critical thermal_res.
  kThermalRunaway,
};
const char* ToString(SolveStatus status);

// The numbers of a solved circuit, indexed like the Circuit it came from.
struct Solution {
  std::vector<double> node_voltage;      // V, per circuit node; [0] is gnd = 0
  std::vector<double> element_voltage;   // V, v(node_a) - v(node_b), per element
  std::vector<double> element_current;   // A, from node_a through the element to node_b
  std::vector<double> junction_voltage;  // V, diodes only (NaN for other elements)
  std::vector<double> small_signal_res;  // Ohm, dV/dI of diodes (NaN for others)
  // degC, per element: each diode's junction temperature (its own temp=, the ambient, or
  // for a heated diode the solved Tj); NaN for other elements.
  std::vector<double> junction_temp;
  std::vector<double> sink_temp;  // degC, per Circuit::heatsinks
};

// V: the most a stray current of abs_current_tol, entering the circuit at any one node,
// may move a node whose voltage the solution determines (SolveSummary::undetermined_nodes).
// A tenth of the thermal voltage kT/q at 300 K (25.85 mV): a junction's current changes by
// a factor e per n thermal voltages, so a node known to better than this fixes every
// junction current at it to within 4 %. With the default 1e-12 A it is that current's
// drop across 2.6 GOhm, so every node with a resistive path of at most 1 GOhm to gnd is
// determined (docs/solver.md, "Undetermined nodes", has the derivation).
inline constexpr double kUndeterminedVolts = 2.585e-3;

// The solver's account of one solve.
struct SolveSummary {
  SolveStatus status = SolveStatus::kNoConvergence;
  SolverMethod method = SolverMethod::kClassic;  // the solver that produced this result
  // The network is monotone, so its DC solution (when there is one) is unique: the
  // strictly convex potential has one minimum (Duffin 1947). Set for monotone networks.
  bool unique = false;
  int newton_steps = 0;                // all steps, aids included
  std::vector<std::string> aids;       // aids needed, in order ("gmin stepping", ...)
  double max_kcl_residual = 0.0;       // A, largest |KCL residual| of the reported solution
  std::string worst_node;              // node where that residual occurs
  std::string detail;                  // why it stopped, with the numbers
  std::vector<std::string> unsettled;  // nodes/devices still moving at the end, on failure
  // Undetermined nodes of a converged solution: a stray current of abs_current_tol
  // entering the circuit at some node moves each of them by more than kUndeterminedVolts,
  // so the equations do not fix their voltages (nodes held only by
  // 1e-20 A leakage, or between matched reverse-biased junctions with no other path).
  // A node with a resistive path of at most 1 GOhm to gnd is never one at the default
  // tolerances. See docs/solver.md, "Undetermined nodes".
  std::vector<std::string> undetermined_nodes;
  // A: the current tolerance of the extra Newton runs that settled nodes the solve's own
  // tolerance held only loosely (docs/solver.md, "Settling runs"); 0 when none ran.
  double settling_current_tol = 0.0;
  // Self-heating (docs/thermal.md), when some diode is heated: the largest |Tj - T_sink -
  // thermal_res * P| of the reported solution (K) and its diode, and the thermal Newton
  // iterations (each one a bias point at fixed junction temperatures).
  bool heated = false;
  double max_thermal_residual = 0.0;
  std::string thermal_worst;
  int thermal_iterations = 0;
  // Heated circuits only: for thermal runaway, the critical thermal_res of `thermal_worst`
  // (K/W) and its junction temperature where the balance is lost (degC); NaN otherwise.
  double critical_thermal_res = std::numeric_limits<double>::quiet_NaN();
  double runaway_temp = std::numeric_limits<double>::quiet_NaN();
  // Another thermal balance than the reported one (a single heated diode, searched up to
  // the scan limit of docs/thermal.md): its junction temperature (degC), else NaN.
  double other_balance_temp = std::numeric_limits<double>::quiet_NaN();
};

// One record per Newton step, for --trace.
struct NewtonStepRecord {
  int step = 0;
  double max_update = 0.0;    // max |dx| of the step's linear solve (V or A)
  double max_residual = 0.0;  // A, max |KCL residual| before the step
  // Junction limiting shortened this step: some junction is evaluated, at the next
  // step, at a limited voltage instead of the one this update reached.
  bool limited = false;
  std::string phase;  // "newton", "gmin 1e-3", "source 40%", ...
  // Potential method only: the line-search step length t (x += t * dx for the node
  // voltages), the potential before the step and its change (W), the round-off scale
  // of those numbers, and the line-search trials it took.
  double step_length = 1.0;
  double potential = 0.0;
  double potential_change = 0.0;
  double potential_roundoff = 0.0;
  int line_search_trials = 0;
};

class BiasSolver {
 public:
  // Fixes the unknowns, the sparsity pattern and every device's value slots, and lets
  // KLU analyse the pattern. The circuit must have passed CheckTopology(). The solver
  // keeps no copy of it: it reads names and values from `circuit` until the next
  // UpdateValues(), so the circuit must outlive that use (and change only through
  // UpdateValues()).
  static Result<std::unique_ptr<BiasSolver>> Create(const Circuit& circuit,
                                                    const SolverOptions& options);
  ~BiasSolver();
  BiasSolver(const BiasSolver&) = delete;
  BiasSolver& operator=(const BiasSolver&) = delete;

  // New element values, part parameters or temperatures; same topology as at Create().
  // From now on the solver reads `circuit` (as for Create()): it may be the same object,
  // changed in place, or another one.
  void UpdateValues(const Circuit& circuit);

  // Solves from `start` (an unknown vector from unknowns(), e.g. a neighbouring sweep
  // point) or, when empty, from the default guess (all unknowns zero). A `start` whose
  // size is not unknown_count() is ignored. Fills *solution when Newton converged, i.e.
  // for kConverged and also for kVerificationFailed (so the failure can be inspected).
  // With allow_aids false only plain Newton runs (sweeps subdivide a failed step first
  // and climb the aid ladder only when that fails too).
  SolveSummary Solve(Solution* solution, std::span<const double> start = {},
                     bool allow_aids = true);

  // The unknown vector of the last converged solve (the voltage of every node but gnd,
  // then every voltage source's current), for warm starts.
  std::span<const double> unknowns() const;
  int unknown_count() const;

  // After a Solve() that converged: *gradient = d(sum_k weight_k q_k)/dp for every number
  // p of the circuit (knee/sensitivity.h), by the adjoint method: one transposed solve
  // with the factors the solve left, refined against the exact Jacobian at the solution.
  // An error when the last Solve() did not converge or the adjoint system is singular.
  Status Sensitivity(std::span<const WeightedQuantity> quantity, CircuitGradient* gradient);

  // Per-step records of the last Solve() when tracing is on.
  void set_trace(bool on);
  // Whether SolveSummary::detail of a converged, verified solve says how Newton
  // converged (on by default). Off, that detail is left empty when plain Newton from a
  // warm start found the point; a point that then fails verification still gets the whole
  // text. Sweeps and spreads, which show no detail for their converged points, turn it
  // off: formatting it was a tenth of a small circuit's point.
  void set_describe_converged(bool on);
  // For a caller that solves one point and then reads only its solution, unknowns() and
  // trace(): on. Each Solve() then frees KLU's factors and the MNA matrix before it fills
  // the solution (a million-unknown network: about 200 MB less at the end of the solve).
  // A later Solve() or Sensitivity() makes them again; its factors are then fresh ones,
  // so its last bits may differ from those of a solver that kept them. Heated circuits
  // keep them (their balance solves and differentiates many points). Off by default.
  void set_single_point(bool on);
  const std::vector<NewtonStepRecord>& trace() const;

 private:
  struct Impl;
  explicit BiasSolver(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

// Structural checks before solving (each problem a Diagnostic naming the elements):
// empty circuit, an element whose two ends are the same node, a node with no DC path
// to gnd, a loop of voltage sources, a cut set of current sources.
std::vector<Diagnostic> CheckTopology(const Circuit& circuit);

}  // namespace knee
