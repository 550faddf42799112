// The solver's internal tuning: every convergence constant that is not a SolverOptions
// field, grouped by the stage it tunes, with its meaning (docs/architecture.md,
// "Constants and options"). The defaults are the values the solver was measured with
// (docs/solver.md); SolveTuning::From derives the whole set from the user's options in
// one place. Constants that belong to one formula stay beside it: Newton's overflow
// halvings (newton.cc), the noise factor of the update test (convergence.h), junction
// limiting's falling-step bounds (junction_limits.cc), the rounding of a junction
// voltage (diode_device.h) and the GMRES refinement's (linear_refine.h).
#pragma once

#include <algorithm>

#include "knee/solver.h"

namespace knee::internal {

// The classic ladder's continuation aids (continuation.cc).
struct ContinuationTuning {
  int max_gmin_retries = 8;     // halvings (in log scale) of a failed gmin rung
  int max_source_retries = 12;  // subdivisions of a failed source step
  int max_source_rungs = 2000;  // all source-stepping runs together
};

// Loose nodes after a converged solve (loose_nodes.cc).
struct LooseNodeTuning {
  // A node is loose by the tolerance only beyond this many voltage tolerances: a node a
  // picoampere moves by a few microvolts is settled by the polishing steps, not worth a
  // run of its own at every sweep point.
  double margin = 10.0;
  double current_floor = 1e-40;  // A, the smallest current tolerance of the loose-node run
  // Leakage-balanced nodes move at most about n*Vt per step (Newton on a balance of two
  // exponential tails), so the loose-node run gets at least this many steps.
  int min_newton_steps = 1000;
  int rounds = 3;  // loose-node runs at most
  // The loose-node run's rel_tol, at most: a node between two nearly saturated junctions
  // balances the last e^-14 of their currents, which rel_tol's 1e-6 of its largest
  // current does not resolve.
  double max_rel_tol = 1e-12;

  // The options of the loose-node run, from the solve's own (the current tolerance is
  // then scaled per round).
  SolverOptions RunOptions(const SolverOptions& o) const {
    SolverOptions tight = o;
    tight.max_newton_steps = std::max(o.max_newton_steps, min_newton_steps);
    tight.rel_tol = std::min(o.rel_tol, max_rel_tol);
    return tight;
  }
};

// Island re-rooting after a converged solve (post_solve.cc): a member whose largest
// current exceeds its root's by this factor has the island rooted again.
struct IslandTuning {
  double reroot_factor = 1e3;
};

// The bound of every node voltage (screen.cc, SetVoltageBound): margin times the sum of
// the sources' volts, amps times ohms, and the junction span, plus a floor.
struct VoltageBoundTuning {
  double margin = 10.0;
  double floor = 1e4;  // V
  // Thermal scales a junction law spans on either side (beyond it the exponential is 0
  // or above 1e300 A): each junction's share of the span.
  double junction_exponents = 800.0;
};

// The potential method (potential.cc, potential_step.cc; docs/solver.md).
struct PotentialTuning {
  // The junction conductance of the step onto the sources' constraints: this factor times
  // the largest resistor (or series resistance) conductance of the circuit, 1 S if none.
  double stiff_factor = 1e6;
  // Every node of that step has a shunt of this fraction of the stiffness to gnd: a group
  // of nodes joined by stiff junctions and held otherwise only by resistors that round
  // away beside them (1e9 S beside 1e-8 S) would leave the matrix singular; with the
  // shunt it stays where it is (near 0 V from a cold start) unless a stiff junction ties
  // it to a source. Where the matrix is still singular, the stiffness is lowered by 1e3
  // per try down to softest_feasibility of it.
  double feasibility_shunt = 1e-10;
  double softest_feasibility = 1e-12;
  // Armijo's sufficient-decrease fraction: L. Armijo, "Minimization of functions having
  // Lipschitz continuous first partial derivatives", Pacific J. Math. 16(1), 1966; the
  // value 1e-4 is the one J. Nocedal and S. J. Wright, Numerical Optimization, 2nd ed.,
  // Springer 2006, ch. 3, suggest (recalled from memory).
  double armijo_fraction = 1e-4;
  // The curvature condition of the weak Wolfe conditions, phi'(t) >= c2 * phi'(0): a step
  // after which the potential still falls at more than c2 of its initial rate is too
  // short and is lengthened or refined (Nocedal and Wright, ch. 3, recalled from memory:
  // 0.9 is their value for Newton-type directions).
  double curvature_fraction = 0.9;
  // Creeping: a full step that repeats the one before (every node within creep_repeat of
  // its largest change) is Newton's step c on a tail a*v + b*exp(-v/c), the same length
  // however far the minimum lies (hundreds of equal steps on a long tail). The next
  // search then asks the slope to flatten to creep_curvature of its start, which doubles
  // the step out along the tail (an exact line search, as far as the bracket goes).
  double creep_repeat = 0.05;
  double creep_curvature = 1e-3;
  int max_line_search_trials = 80;     // potential evaluations per line search
  double max_step_length = 1048576.0;  // 2^20 Newton steps along one direction
  // Trial points of the line search keep every junction law's exponential term at or
  // below max(e^log_current_cap A, its largest value at the start of the step): far out
  // on the exponential, conductances of 1e30 S and more leave neither the Newton
  // direction nor the potential resolvable, and further out still the law leaves the
  // doubles. e^40 A (2.4e17 A) is far above any current a diode carries, so the cap is
  // inactive at a solution; should the line search find no step under it, it searches
  // once more without it (a trial point whose law overflows is still refused).
  double log_current_cap = 40.0;
  // A step shorter than this fraction of the Newton step switches the Hessian
  // modification on for the next direction, and takes only its own share of the
  // multipliers (PotentialSolver::MultiplierFraction).
  double short_step = 1e-3;
  // A step shorter than this, taken with the junction floor already on, also grows the
  // diagonal shift: a floored direction that still gives only vanishing steps is turned
  // further towards steepest descent instead of being tried again.
  double tiny_step = 1e-8;
  // The diagonal shift of the Hessian (PotentialSolver::SolveStep): its first value, its
  // growth per direction that gave no step, and its largest value.
  double first_shift = 1e-12;  // S
  double shift_growth = 1e3;
  double last_shift = 1e6;          // S
  int max_stationary_halvings = 8;  // of a step whose slope is below its round-off
};

// Polishing after convergence (polisher.h): further full Newton steps until a step is
// below `factor` times the update tolerance, or below `fast` times it while converging at
// least 10x per step (the error left is then below 1e-4 of the tolerance: 1e-10
// relative), or `steps` were taken. Quadratic convergence makes one step enough on most
// networks (a sweep point need not pay for a second step that 1e-6 alone would ask for);
// where convergence is linear (faint nodes, flat valleys) the steps go on to 1e-6, so
// that the methods reach the same point to round-off.
struct PolishTuning {
  int steps = 4;
  // Polishing goes on past `steps` while the last step still broke the update tolerance
  // (a run that ended on its residual with a node still creeping by volts a step), up to
  // this many.
  int steps_creeping = 50;
  double factor = 1e-6;
  double fast = 1e-3;
  double relative = 1e-11;  // every unknown's next change, relative to itself
  double stalled = 0.25;    // step ratio above which the steps no longer shrink
};

// Everything above, for one solver.
struct SolveTuning {
  ContinuationTuning continuation;
  LooseNodeTuning loose;
  IslandTuning islands;
  VoltageBoundTuning bound;
  PotentialTuning potential;
  PolishTuning polish;

  // The tuning for these options. Today no constant depends on them but the loose-node
  // run's options (LooseNodeTuning::RunOptions); this is the one place that would say so.
  static SolveTuning From(const SolverOptions&) { return SolveTuning{}; }
};

}  // namespace knee::internal
