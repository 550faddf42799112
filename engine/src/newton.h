// One Newton-Raphson run on the MNA system: J dx = -F(x), x += dx, until both the update
// and the KCL residual pass their tests (docs/solver.md, "Convergence").
#pragma once

#include <cmath>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "convergence.h"
#include "knee/solver.h"
#include "linear_refine.h"
#include "linear_solver.h"
#include "mna.h"
#include "polisher.h"

namespace knee::internal {

class NewtonSolver {
 public:
  NewtonSolver(MnaSystem* mna, LinearSolver* klu, const SolverOptions& options, int size);

  // Runs from x (updated in place) with the given aids; limiting follows the options.
  // Appends one record per step to *trace when trace is not null.
  NewtonOutcome Run(AssemblyAids aids, std::string_view phase, std::span<double> x,
                    std::vector<NewtonStepRecord>* trace);
  // The same with `options` for this run alone (the loose-node run's tolerances); the
  // solver's own options are untouched.
  NewtonOutcome Run(AssemblyAids aids, std::string_view phase, std::span<double> x,
                    std::vector<NewtonStepRecord>* trace, const SolverOptions& options);

  // After a failed run: unknowns whose last update exceeded its tolerance and diodes
  // whose junction was still being limited.
  std::vector<std::string> Unsettled(std::span<const double> x) const;

  // Whether the factors the KLU solver holds are those of the exact model's Jacobian
  // (no gmin, full sources, no regularising shunt) at the last point that was factored.
  bool exact_factors() const { return exact_factors_; }
  // Node voltages are clamped to [-bound, bound] after each step (a safeguard against
  // steps that a nearly singular Jacobian blows up; the bound contains every solution).
  void set_voltage_bound(double bound) { voltage_bound_ = bound; }
  // Whether a converged run's outcome carries its detail text (on by default); off, the
  // outcome's note alone holds the numbers, for Describe() when the text is wanted.
  void set_describe_converged(bool on) { describe_converged_ = on; }
  // The detail text of a converged run ("converged in N steps: ...").
  std::string Describe(const ConvergedNote& note) const;
  // Frees the working vectors; the next Run sizes them again.
  void ReleaseWorkspace();

 private:
  AssemblyOutcome AssembleHalving(std::span<double> x, const AssemblyAids& aids, bool may_halve,
                                  bool* halved);
  bool SolveStep(std::span<double> dx, NewtonOutcome* outcome);
  // The converged exit after `steps` steps: the detail text with both tests' worst
  // entries, then the polishing steps.
  NewtonOutcome Converged(int steps, const ToleranceCheck& update, const ToleranceCheck& residual,
                          bool step_taken, const AssemblyAids& aids, std::span<double> x);
  LinearStatus SolveRegularized(std::span<double> dx);
  // last_ratio: the worst |dx|/tolerance of the last Newton update (PolishSettled).
  void Polish(const AssemblyAids& aids, std::span<double> x, double last_ratio);
  bool NoiseFloor();
  void RefineStep(std::span<double> dx);
  bool Clamp(std::span<double> x) const;
  void SizeVectors();

  MnaSystem* mna_;
  LinearSolver* klu_;
  SolverOptions configured_;  // the solver's own options
  SolverOptions options_;     // those of the current (or last) run
  size_t size_;               // unknowns
  std::vector<double> dx_;
  std::vector<double> saved_x_;
  std::vector<double> noise_;                    // J^-1 times the residual's round-off allowance
  std::vector<double> minus_f_, row_tolerance_;  // RefineStep's right side and row weights
  Polisher polisher_;
  StepRefiner refiner_;
  double voltage_bound_ = HUGE_VAL;  // V
  // Jacobian values with the singular-step shunt, sized on the first singular step (most
  // circuits never take one; a million-unknown ladder would hold 24 MB for it).
  std::vector<double> regularized_;
  bool plain_run_ = false;          // the current Run has no aid (gmin, source scale)
  bool exact_factors_ = false;      // see exact_factors()
  bool describe_converged_ = true;  // see set_describe_converged()
};

}  // namespace knee::internal
