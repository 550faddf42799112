// The potential method (docs/solver.md, "The potential method"): for a monotone network
// (sources, positive resistors, diodes), the DC solution minimises the network's
// co-content over the node voltages that satisfy the voltage sources (Millar 1951;
// Duffin 1947). Newton directions come from the MNA system, which is exactly the
// Newton (KKT) system of that equality-constrained minimisation; a line search on the
// co-content makes every accepted step decrease it, so no limiting and no aid is needed.
#pragma once

#include <cmath>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "convergence.h"
#include "klu_solver.h"
#include "knee/circuit.h"
#include "knee/solver.h"
#include "mna.h"
#include "network_class.h"
#include "polisher.h"

namespace knee::internal {

// The junction conductance of the step onto the sources' constraints: kStiffFactor times
// the largest resistor (or series resistance) conductance of the circuit, 1 S if none.
inline constexpr double kStiffFactor = 1e6;
// Every node of that step has a shunt of this fraction of the stiffness to gnd: a group
// of nodes joined by stiff junctions and held otherwise only by resistors that round away
// beside them (1e9 S beside 1e-8 S) would leave the matrix singular; with the shunt it
// stays where it is (near 0 V from a cold start) unless a stiff junction ties it to a
// source. Where the matrix is still singular, the stiffness is lowered by 1e3 per try
// down to kSoftestFeasibility of it.
inline constexpr double kFeasibilityShunt = 1e-10;
inline constexpr double kSoftestFeasibility = 1e-12;
double StiffJunctionConductance(const Circuit& circuit);

// Line-search constants. Armijo's sufficient-decrease fraction: L. Armijo, "Minimization
// of functions having Lipschitz continuous first partial derivatives", Pacific J. Math.
// 16(1), 1966; the value 1e-4 is the one J. Nocedal and S. J. Wright, Numerical
// Optimization, 2nd ed., Springer 2006, ch. 3, suggest (recalled from memory).
inline constexpr double kArmijoFraction = 1e-4;
// The curvature condition of the weak Wolfe conditions, phi'(t) >= c2 * phi'(0): a step
// after which the potential still falls at more than c2 of its initial rate is too short
// and is lengthened or refined (Nocedal and Wright, ch. 3, recalled from memory: 0.9 is
// their value for Newton-type directions).
inline constexpr double kCurvatureFraction = 0.9;
// Creeping: a full step that repeats the one before (every node within kCreepRepeat of
// its largest change) is Newton's step c on a tail a*v + b*exp(-v/c), the same length
// however far the minimum lies (hundreds of equal steps on a long tail). The next
// search then asks the slope to flatten to kCreepCurvature of its start, which doubles
// the step out along the tail (an exact line search, as far as the bracket goes).
inline constexpr double kCreepRepeat = 0.05;
inline constexpr double kCreepCurvature = 1e-3;
inline constexpr int kMaxLineSearchTrials = 80;      // potential evaluations per line search
inline constexpr double kMaxStepLength = 1048576.0;  // 2^20 Newton steps along one direction
// Trial points of the line search keep every junction law's exponential term at or
// below max(e^kLogCurrentCap A, its largest value at the start of the step): far out on
// the exponential, conductances of 1e30 S and more leave neither the Newton direction
// nor the potential resolvable, and further out still the law leaves the doubles. e^40 A
// (2.4e17 A) is far above any current a diode carries, so the cap is inactive at a
// solution; should the line search find no step under it, it searches once more
// without it (a trial point whose law overflows is still refused: it is not finite).
inline constexpr double kLogCurrentCap = 40.0;
// A step shorter than this fraction of the Newton step switches the Hessian modification
// on for the next direction (PotentialSolver::Run).
inline constexpr double kShortStep = 1e-3;
// The share of the Newton direction's multiplier part (the voltage sources' currents)
// that a step of length t takes: all of it for any real step, since the multipliers do
// not enter the potential and the direction gives them for the whole step; t itself
// below kShortStep, where the direction came from a nearly singular Hessian and its
// multiplier part with it (taken whole, a multiplier of 1e74 A would leave every later
// trial at that residual); none for t = 0.
inline double MultiplierFraction(double t) { return t >= kShortStep ? 1.0 : t; }
// A step shorter than this, taken with the junction floor already on, also grows the
// diagonal shift: a floored direction that still gives only vanishing steps is turned
// further towards steepest descent instead of being tried again.
inline constexpr double kTinyStep = 1e-8;
// The diagonal shift of the Hessian (PotentialSolver::SolveStep): its first value, its
// growth per direction that gave no step, and its largest value.
inline constexpr double kFirstShift = 1e-12;  // S
inline constexpr double kShiftGrowth = 1e3;
inline constexpr double kLastShift = 1e6;  // S
// Halvings of a step along a direction whose slope is below its round-off.
inline constexpr int kMaxStationaryHalvings = 8;

class PotentialSolver {
 public:
  PotentialSolver(MnaSystem* mna, KluSolver* klu, const SolverOptions& options, int size);

  // Minimises the potential from x (updated in place). Appends one record per Newton
  // step to *trace when trace is not null. The exits are those of NewtonExit.
  NewtonOutcome Run(std::span<double> x, std::vector<NewtonStepRecord>* trace);

  // After a failed run: unknowns whose last update exceeded its tolerance (only after
  // a Run).
  std::vector<std::string> Unsettled(std::span<const double> x) const;

  // Line-search evaluations (assembly passes) of the last Run.
  int evaluations() const { return evaluations_; }

  void set_options(const SolverOptions& options) { options_ = options; }
  // Whether the factors the KLU solver holds are those of the exact Hessian (no floor,
  // no shift) at the last point that was factored (as NewtonSolver::exact_factors).
  bool exact_factors() const { return exact_factors_; }
  // Conductance (S) that junctions take in the step onto the sources' constraints: far
  // above every resistor's, so that the sources' voltages land on resistors, not on
  // junctions (see FeasibilityStep).
  void set_stiff_conductance(double g) { stiff_ = g; }
  // Trial points with a node voltage beyond this bound (one that contains every
  // solution, see bias.cc SetVoltageBound) are refused by the line search.
  void set_voltage_bound(double bound) { voltage_bound_ = bound; }

 private:
  struct Trial {
    bool finite = false;
    double potential = 0.0;
    double potential_magnitude = 0.0;
    double slope = 0.0;            // d/dt of the potential along dx_ at this point
    double max_log_current = 0.0;  // ln A, the largest junction-law term at this point
    // Worst |F_r| / (its tolerance) at this point: the merit for steps whose change of
    // the potential is below the potential's round-off.
    double residual_ratio = 0.0;
    double residual_merit = 0.0;  // ResidualMerit at this point
  };
  // What one Run carries from step to step.
  struct RunState {
    double potential = 0.0;
    double potential_magnitude = 0.0;
    double base_log_current = 0.0;  // ln A, the largest junction term at x
    ToleranceCheck update;          // the last step's update test
    bool creeping = false;          // the last full step repeated the one before (kCreepRepeat)
  };
  // The step chosen along one direction (ChooseStep).
  struct StepChoice {
    bool ok = false;
    double t = 1.0;
    int trials = 0;
    Trial accepted;
    const char* phase = "potential";
    double slope0 = 0.0;            // W, the slope at t = 0
    double before = 0.0;            // W, the potential before the step
    double before_magnitude = 0.0;  // its round-off scale
    // The round-off of the change of the potential from the start to `tr`.
    double RoundOff(const Trial& tr) const {
      return MnaSystem::kRoundOffFactor * (tr.potential_magnitude + before_magnitude);
    }
  };
  bool Start(std::span<double> x, RunState* state, NewtonOutcome* outcome);
  bool Direction(bool feasible, int step, std::span<double> x, NewtonOutcome* outcome);
  void BranchChange();
  StepChoice ChooseStep(const RunState& state, const ToleranceCheck& residual, bool feasible,
                        std::span<double> x);
  void AdaptHessian(double t, bool residual_passed, std::span<const double> x);
  ToleranceCheck UpdateTest(bool residual_passed, bool feasible, std::span<const double> x);
  void Record(int step, double max_residual, const RunState& state, const StepChoice& c,
              std::vector<NewtonStepRecord>* trace) const;
  Trial Evaluate(std::span<const double> base, double t, std::span<double> x);
  bool LineSearch(double slope0, double slope_roundoff, double before, double before_magnitude,
                  double merit0, double log_current_cap, double curvature, std::span<double> x,
                  double* t, int* trials, Trial* accepted);
  // Whether the step just taken (step_, full length) repeats last_step_; keeps it.
  bool Repeats();
  double Slope(std::span<const double> x) const;
  double SlopeRoundOff() const;
  bool Feasible() const;
  void SetFloor(bool on, std::span<const double> x);
  bool SolveStep(NewtonOutcome* outcome);
  bool FeasibilityStep(std::span<double> x, NewtonOutcome* outcome);
  void Polish(std::span<double> x, double last_ratio);
  bool NoiseFloor();
  void MapStep();
  void SizeVectors();

  MnaSystem* mna_;
  KluSolver* klu_;
  SolverOptions options_;
  size_t size_;               // unknowns
  std::vector<double> dx_;    // Newton direction in the MNA's island coordinates
  std::vector<double> step_;  // the same as node voltages (and then the step taken)
  std::vector<double> base_;
  std::vector<double> last_step_;  // the last full step, for Repeats()
  std::vector<double> noise_;      // J^-1 times the residual's round-off allowance
  Polisher polisher_;
  std::vector<double> branch_dv_;  // A^T dv: the change of every source's v(P) - v(N)
  int evaluations_ = 0;
  double stiff_ = 1.0;
  double voltage_bound_ = HUGE_VAL;  // V
  bool floor_ = false;               // the Hessian modification of short steps (see Run)
  double shift_ = 0.0;               // S, the diagonal shift of the Hessian (see SolveStep)
  bool exact_factors_ = false;       // see exact_factors()
  std::span<double>* x_ = nullptr;   // the current point, during Run
};

}  // namespace knee::internal
