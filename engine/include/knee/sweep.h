// DC sweeps: the Cartesian product of axes, axis 0 the inner (fastest) loop, solved by
// continuation. The result does not depend on how the sweep is split: the points are cut
// into fixed blocks whose boundaries depend only on the sweep, every block starts from
// the same cold guess, and threads and shards take whole blocks (docs/sweeps.md).
#pragma once

#include <functional>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/solver.h"

namespace knee {

struct SweepGrid {
  std::vector<std::vector<double>> axes;  // axes[0] is the inner loop

  // The product of the axis sizes (0 without axes), or nullopt when it does not fit a
  // long long: such a sweep is refused, never wrapped to a small count.
  std::optional<long long> CheckedPointCount() const;
  long long PointCount() const;  // CheckedPointCount(), which must fit
  // The per-axis value indices of point `index` (row-major, axis 0 fastest).
  void Indices(long long index, std::span<long long> out) const;
};

// Points are cut into blocks of at most block_size consecutive inner-axis points that
// never cross a change of an outer axis value. The blocks are computed, not stored, so a
// sweep of any size costs nothing here.
struct SweepBlocks {
  long long total = 0;       // points of the sweep
  long long line = 1;        // points per value of the outer axes (the inner axis' size)
  long long block_size = 1;  // most points per block
  long long per_line = 0;    // blocks per line

  long long block_count() const { return total == 0 ? 0 : total / line * per_line; }
  // First point of block b (0 <= b <= block_count(); Start(block_count()) is the end).
  long long Start(long long b) const;
  // The block holding `point` (0 <= point < total).
  long long BlockOf(long long point) const;
};

struct SweepOptions {
  long long block_size = 512;  // points per block, >= 1; part of the result's identity
  int jobs = 1;                // worker threads, >= 1
  int max_halvings = 10;       // a failed step is retried in halves down to 2^-max_halvings
  bool extrapolate = true;     // predict each start linearly from the two previous points
  // When set: called in the worker thread after each converged point, before the sink,
  // with the solver that holds the point (for BiasSolver::Sensitivity there).
  std::function<void(long long index, BiasSolver& solver, const Solution& solution)> at_solution;
};
std::optional<std::string> Validate(const SweepOptions& options);

SweepBlocks CutIntoBlocks(const SweepGrid& grid, long long block_size);

// Points [first, end) of the slice `shard` (0-based) of `shards`: slices of the outer
// axis' values when there are several axes, else equal slices of the points (so a sweep
// of one block still splits evenly; see RunSweep for how a slice that starts inside a
// block keeps the whole sweep's numbers).
std::pair<long long, long long> ShardPoints(const SweepGrid& grid, int shard, int shards);

// Sets `circuit` to the values of one point (one value per axis, which may lie between
// grid values while a step is subdivided); returns "" or a message. Called from worker
// threads, each with its own circuit.
using ApplyPoint = std::function<std::string(std::span<const double> values, Circuit* circuit)>;

// Receives each point as it is solved: `solution` is null when the point failed. Called
// from worker threads, never twice for one index. The summary's detail says why a failed
// point failed; for a converged point it may be empty (BiasSolver::set_describe_converged).
using PointSink =
    std::function<void(long long index, const SolveSummary& summary, const Solution* solution)>;

inline constexpr size_t kMaxUndeterminedNodes = 20;

struct SweepStats {
  long long points = 0;
  long long failed = 0;
  long long newton_steps = 0;
  int max_newton_steps = 0;
  std::vector<std::string> aids;
  // Nodes undetermined at any solved point (SolveSummary::undetermined_nodes), first seen
  // first, at most kMaxUndeterminedNodes of them.
  std::vector<std::string> undetermined_nodes;
  std::vector<SolverMethod> methods;  // solvers that produced the points, first use order
  bool unique = true;                 // every solved point's solution is unique
  double max_kcl_residual = 0;
  std::string worst_node;
  // Self-heating: some point had heated diodes; the largest thermal balance residual (K)
  // over the solved points and its diode.
  bool heated = false;
  double max_thermal_residual = 0;
  std::string thermal_worst;
  std::string setup_error;  // BiasSolver::Create failed; nothing was solved
};

// Solves and reports the points [first_point, end_point). A block that begins before
// first_point is solved from its own start, and its points before first_point are
// neither reported nor counted: every reported number is the one the whole sweep gives,
// wherever a slice or a window of the sweep begins.
SweepStats RunSweep(const Circuit& circuit, const SweepGrid& grid, const SweepBlocks& blocks,
                    long long first_point, long long end_point, const ApplyPoint& apply,
                    const SolverOptions& solver_options, const SweepOptions& options,
                    const PointSink& sink);

// Adds one solve to *stats: a point, its steps, method and aids, and, when it converged,
// its uniqueness, undetermined nodes and residual (failed points are counted by the
// caller, which knows whether the point is reported).
void AddSolveToStats(const SolveSummary& summary, SweepStats* stats);

// Adds the account of `part` (a later window of the same sweep) to *total.
void MergeSweepStats(const SweepStats& part, SweepStats* total);

}  // namespace knee
