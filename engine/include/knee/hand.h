// The simplified diode models of hand calculation, each solved exactly on the whole
// circuit: every diode is a straight line in each of its states (off: open; on: a drop
// plus an on-resistance; breakdown: -Vbr(T) plus a resistance), and the solver finds the
// state sets that are consistent. See docs/hand-models.md.
//
// Pure: no parser, no I/O; every function here depends only on its arguments.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/result.h"
#include "knee/solver.h"

namespace knee {

enum class DiodeState { kOff, kOn, kBreakdown };
const char* ToString(DiodeState state);  // "off", "on", "breakdown"

// The straight lines of one diode. Forward: V = on_voltage + on_res * I for I >= 0.
// Breakdown (only when has_breakdown): V = -breakdown_voltage + breakdown_res * I for
// I <= 0. Off: I = 0 while -breakdown_voltage < V < on_voltage.
struct DiodeLines {
  double on_voltage = 0;  // V
  double on_res = 0;      // Ohm, >= 0
  bool has_breakdown = false;
  double breakdown_voltage = 0;  // V, > 0: Vbr(T) of the part, or the tangent's intercept
  double breakdown_res = 0;      // Ohm, >= 0
};

enum class HandModelKind {
  kIdeal,            // 0 V on, open off
  kConstantDrop,     // a fixed drop on, open off
  kPiecewiseLinear,  // a drop plus an on-resistance, or the tangent at a current
};
const char* ToString(HandModelKind kind);  // "ideal", "drop", "pwl"

struct HandModel {
  HandModelKind kind = HandModelKind::kIdeal;
  std::string description;        // "drop 700 mV", "tangent at 1 mA", ...
  std::vector<DiodeLines> lines;  // per circuit element; used for diodes only
};

// Ideal: 0 V on, open off; breakdown at -Vbr(T) with no resistance.
HandModel MakeIdealModel(const Circuit& circuit);
// Constant drop: `drop` V on, open off; breakdown at -Vbr(T) with no resistance.
HandModel MakeConstantDropModel(const Circuit& circuit, double drop);
// Drop plus on-resistance; breakdown at -Vbr(T) with the same resistance.
HandModel MakeDropResistanceModel(const Circuit& circuit, double drop, double on_res);
// The tangent to each diode's exact curve (series resistance included) at the forward
// current `current[e]` (A, > 0) of element e, and for parts with a breakdown voltage the
// tangent of the breakdown branch at the reverse current -current[e]. `current` is
// indexed by element (entries of non-diodes ignored). Fails on a current <= 0 or one at
// which the curve cannot be evaluated.
Result<HandModel> MakeTangentModel(const Circuit& circuit, const std::vector<double>& current);

// The point on a diode's exact curve (the law of docs/model.md) where it carries
// `current` (A, either sign): the terminal voltage and dV/dI there, series resistance
// included. Fails when the current is beyond what the breakdown-free reverse branch can
// carry (|I| >= area * Is(T) in reverse without breakdown).
struct CurvePoint {
  double voltage = 0;  // V, terminal voltage
  double slope = 0;    // Ohm, dV/dI
};
Result<CurvePoint> PointAtCurrent(const Circuit& circuit, int element, double current);

// When a diode conducts in the exact solution (docs/hand-models.md, "Conducting"):
// on when its junction voltage exceeds kConductingVt * n * Vt (the junction current is
// then more than e^10 times the saturation current); in breakdown when the junction
// voltage is below -Vbr(T) + kConductingVt * nbr * Vt (the breakdown current is more
// than e^-10 times breakdown_i); off otherwise.
inline constexpr double kConductingVt = 10.0;
DiodeState ExactState(const Circuit& circuit, int element, double junction_voltage);
// n * Vt / |I| (or nbr * Vt / |I| in breakdown) of a diode at the exact bias point.
double JunctionResistance(const Circuit& circuit, int element, const Solution& exact);

struct HandSearchOptions {
  // Every state set is tried when there are at most this many (2 per diode, 3 for a
  // diode whose part has a breakdown voltage); above, an iterative search runs.
  long long max_enumerated_sets = 65536;
  // The iterative search starts here (per element; e.g. the exact solution's states)
  // and flips the violating diodes of each tried set; it stops after max_iterations sets.
  std::vector<DiodeState> start;
  int max_iterations = 1000;
  // Bounds the time of either search on a large network: state sets tried times the
  // network's size (nodes plus elements) stays within this. Every set is tried only when
  // all of them fit; the iterative search stops when the next set would not fit.
  long long max_work = 200'000'000;
  // A conducting diode may carry down to -current_tol A, a blocking one may see up to
  // voltage_tol V beyond its on or breakdown voltage (floating-point slack).
  double voltage_tol = 1e-9;   // V, plus 1e-9 times the largest node voltage
  double current_tol = 1e-12;  // A, plus 1e-9 times the largest branch current
};

enum class HandStatus {
  kUnique,        // exactly one consistent state set (exhaustive search)
  kFound,         // a consistent set found by the iterative search; uniqueness unchecked
  kEquivalent,    // several consistent sets, all with the same node voltages; first kept
  kAmbiguous,     // several consistent sets with different node voltages
  kNoConsistent,  // no consistent state set (exhaustive), or none found (iterative)
};
const char* ToString(HandStatus status);
// Whether HandResult::solutions.front() is the model's answer.
inline bool HasAnswer(HandStatus s) {
  return s == HandStatus::kUnique || s == HandStatus::kFound || s == HandStatus::kEquivalent;
}

struct HandSolution {
  std::vector<DiodeState> states;  // per element (kOff for non-diodes)
  Solution solution;               // junction_voltage NaN; small_signal_res the line's slope
};

struct HandResult {
  HandStatus status = HandStatus::kNoConsistent;
  bool exhaustive = true;  // every state set was tried
  long long sets_tried = 0;
  long long singular_sets = 0;          // sets that leave the circuit undetermined
  std::vector<HandSolution> solutions;  // consistent sets found (at most 8 kept)
  long long consistent_sets = 0;        // how many were found in all
  bool work_limit_reached = false;      // the iterative search stopped at max_work
  std::string detail;                   // for kNoConsistent / kAmbiguous: why, in words
};

// The settings of the constant-drop and piecewise-linear models that `knee hand` sets
// beside the ideal one (docs/hand-models.md), as --drop, --on-res and --fit-at give them.
struct HandSettings {
  double drop = 0.7;             // V, in [0, 100]: on-voltage of the drop models
  std::optional<double> on_res;  // Ohm, >= 0: piecewise linear = drop plus this resistance
  std::optional<double> fit_at;  // A, > 0: piecewise linear = each curve's tangent here
};
// A message naming the field, its value and the rule broken, or nothing.
std::optional<std::string> Validate(const HandSettings& settings);
// The piecewise-linear model of `settings` (description left empty): the tangent at
// fit_at, else the drop plus on_res, else the drop plus each part's own series_res/area.
Result<HandModel> MakePiecewiseModel(const Circuit& circuit, const HandSettings& settings);
// The hand models compared, in order: ideal, constant drop, piecewise linear.
Result<std::vector<HandModel>> MakeHandModels(const Circuit& circuit, const HandSettings& settings);
// Per element: ExactState() of each diode at the exact solution, kOff for other elements.
std::vector<DiodeState> ExactStates(const Circuit& circuit, const Solution& exact);

// Solves `circuit` with every diode replaced by `model`'s lines. The circuit must have
// passed CheckTopology(). Always terminates.
HandResult SolveHand(const Circuit& circuit, const HandModel& model,
                     const HandSearchOptions& options);

// The linear solve of one state set: fills *out and returns true, or returns false
// when the set leaves the circuit undetermined (singular system).
bool SolveStateSet(const Circuit& circuit, const HandModel& model,
                   const std::vector<DiodeState>& states, Solution* out);

}  // namespace knee
