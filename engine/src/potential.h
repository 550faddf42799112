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
#include "knee/circuit.h"
#include "knee/solver.h"
#include "linear_solver.h"
#include "mna.h"
#include "network_class.h"
#include "polisher.h"
#include "tuning.h"

namespace knee::internal {

// The junction conductance of the step onto the sources' constraints: `factor`
// (PotentialTuning::stiff_factor) times the largest resistor (or series resistance)
// conductance of the circuit, 1 S if none.
double StiffJunctionConductance(const Circuit& circuit, double factor);

class PotentialSolver {
 public:
  PotentialSolver(MnaSystem* mna, LinearSolver* klu, const SolverOptions& options, int size,
                  const PotentialTuning& tuning = {});

  // Minimises the potential from x (updated in place). Appends one record per Newton
  // step to *trace when trace is not null. The exits are those of NewtonExit.
  NewtonOutcome Run(std::span<double> x, std::vector<NewtonStepRecord>* trace);
  // The same with `options` for this run alone; the solver's own are untouched.
  NewtonOutcome Run(std::span<double> x, std::vector<NewtonStepRecord>* trace,
                    const SolverOptions& options);

  // After a failed run: unknowns whose last update exceeded its tolerance (only after
  // a Run).
  std::vector<std::string> Unsettled(std::span<const double> x) const;

  // Frees the working vectors (the next Run sizes them again). A converged cold solve
  // does not keep them beside the solution: 40 bytes an unknown, read by no later stage
  // (only a failed run's last step is, by Unsettled).
  void ReleaseWorkspace();

  // Line-search evaluations (assembly passes) of the last Run.
  int evaluations() const { return evaluations_; }

  // Whether the factors the KLU solver holds are those of the exact Hessian (no floor,
  // no shift) at the last point that was factored (as NewtonSolver::exact_factors).
  bool exact_factors() const { return exact_factors_; }
  // Conductance (S) that junctions take in the step onto the sources' constraints: far
  // above every resistor's, so that the sources' voltages land on resistors, not on
  // junctions (see FeasibilityStep).
  void set_stiff_conductance(double g) { stiff_ = g; }
  // Trial points with a node voltage beyond this bound (one that contains every
  // solution, see screen.cc SetVoltageBound) are refused by the line search.
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
    bool creeping = false;  // the last full step repeated the one before (tuning_.creep_repeat)
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
  // The share of the Newton direction's multiplier part (the voltage sources' currents)
  // that a step of length t takes: all of it for any real step, since the multipliers do
  // not enter the potential and the direction gives them for the whole step; t itself
  // below short_step, where the direction came from a nearly singular Hessian and its
  // multiplier part with it (taken whole, a multiplier of 1e74 A would leave every later
  // trial at that residual); none for t = 0.
  double MultiplierFraction(double t) const { return t >= tuning_.short_step ? 1.0 : t; }
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
  LinearSolver* klu_;
  SolverOptions configured_;  // the solver's own options
  SolverOptions options_;     // those of the current (or last) run
  PotentialTuning tuning_;    // tuning.h
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
