// Undetermined nodes: the nodes of a converged, verified solution whose voltages the
// equations do not fix (docs/solver.md, "Undetermined nodes"). One criterion, read from
// the conditioning of the solution itself: a node is undetermined when a stray current
// of the size of the current tolerance, entering the circuit at any one node, can move
// it by more than kUndeterminedVolts (knee/solver.h).
#pragma once

#include <optional>
#include <span>
#include <vector>

#include "klu_solver.h"
#include "knee/circuit.h"
#include "knee/solver.h"
#include "mna.h"

namespace knee::internal {

// Driving-point solves per test: the row-sum screen (one solve) clears every node whose
// bound is below kUndeterminedVolts; each node it does not clear gets one solve of its
// own, up to this many. Nodes beyond are judged by the screen's bound (it can only err
// toward naming a node).
inline constexpr int kMaxDrivingPointSolves = 64;

// The structural screen before the test (BiasSolver's NameUndetermined): where resistors
// and voltage sources alone tie every node to gnd, Z_kk is at most the sum of all
// resistances R (Rayleigh's monotonicity law, as in docs/solver.md) and Z_kj <= Z_kk, so
// the row-sum screen's bound t * (Z 1)_k is at most t * n * R for n node unknowns. At
// most this share of kUndeterminedVolts, the row sums clear every node, the test would
// name none, and it is not run; the tenth leaves its rounding a factor of ten.
inline constexpr double kUndeterminedScreenShare = 0.1;

// The test's buffers, kept across solves so that a sweep point allocates nothing once the
// first point has sized them.
class UndeterminedTest {
 public:
  // The node unknowns undetermined at x, for a converged solution of `mna` whose exact
  // Jacobian at x is assembled in `mna` (after AssembleExact(x)). `run` holds the
  // factors of the run that converged; they are used when `run_exact` (the exact model's
  // Jacobian one step from x), else `probe` gets fresh factors of mna's values (made on
  // first need, so that fresh pivots in `run` do not make later refactors depend on where
  // the test fell; it then reads mna's pattern, KluSolver::AnalyzeBorrowed, so must not
  // outlive mna). When no factors solve (a Jacobian singular at x), the test reads the
  // network's graph instead (UntiedByLatitude).
  std::vector<int> Run(const Circuit& circuit, const MnaSystem& mna, std::span<const double> x,
                       const SolverOptions& options, KluSolver& run, bool run_exact,
                       std::optional<KluSolver>& probe);

  // After Run: each KCL row's stray-current latitude (V), +inf where no solve was
  // possible. For tests and --explain.
  std::span<const double> latitude() const { return latitude_; }
  // Frees the test's vectors (and so latitude()); the next Run sizes them again.
  void ReleaseWorkspace() {
    for (std::vector<double>* v : {&sum_, &column_, &latitude_}) std::vector<double>().swap(*v);
  }

 private:
  bool Latitude(const MnaSystem& mna, double current_tol, KluSolver& factors);
  std::vector<double> sum_, column_, latitude_;
};

// The nodes that no chain of elements tied within the latitude joins to gnd: an element
// ties its two nodes when a stray current of abs_current_tol through its conductance at x
// drops at most kUndeterminedVolts across it. Voltage sources always tie, current sources
// never. The graph reading of the test where the Jacobian is singular at x.
std::vector<int> UntiedByLatitude(const Circuit& circuit, const MnaSystem& mna,
                                  std::span<const double> x, const SolverOptions& options);

}  // namespace knee::internal
