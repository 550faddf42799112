// Continuation over a sweep grid; see sweep.h for why the blocks exist.
#include "knee/sweep.h"

#include <fmt/format.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <memory>
#include <mutex>
#include <thread>

#include "check.h"

namespace knee {

std::optional<long long> SweepGrid::CheckedPointCount() const {
  if (axes.empty()) return 0;
  long long count = 1;
  for (const auto& axis : axes) {
    if (__builtin_mul_overflow(count, static_cast<long long>(axis.size()), &count)) {
      return std::nullopt;
    }
  }
  return count;
}

long long SweepGrid::PointCount() const {
  const std::optional<long long> count = CheckedPointCount();
  KNEE_CHECK(count.has_value());
  return *count;
}

long long SweepBlocks::Start(long long b) const {
  if (b >= block_count()) return total;
  return b / per_line * line + b % per_line * block_size;
}

long long SweepBlocks::BlockOf(long long point) const {
  return point / line * per_line + point % line / block_size;
}

void SweepGrid::Indices(long long index, std::span<long long> out) const {
  for (size_t a = 0; a < axes.size(); ++a) {
    const auto size = static_cast<long long>(axes[a].size());
    out[a] = index % size;
    index /= size;
  }
}

std::optional<std::string> Validate(const SweepOptions& options) {
  if (options.block_size < 1) {
    return fmt::format("SweepOptions.block_size = {}: must be >= 1", options.block_size);
  }
  if (options.jobs < 1) return fmt::format("SweepOptions.jobs = {}: must be >= 1", options.jobs);
  if (options.max_halvings < 0 || options.max_halvings > 50) {
    return fmt::format("SweepOptions.max_halvings = {}: must be in [0, 50]", options.max_halvings);
  }
  return std::nullopt;
}

SweepBlocks CutIntoBlocks(const SweepGrid& grid, long long block_size) {
  SweepBlocks blocks;
  blocks.total = grid.PointCount();
  blocks.block_size = block_size;
  if (blocks.total == 0) return blocks;
  blocks.line = static_cast<long long>(grid.axes[0].size());
  blocks.per_line = (blocks.line + block_size - 1) / block_size;
  return blocks;
}

std::pair<long long, long long> ShardPoints(const SweepGrid& grid, int shard, int shards) {
  const long long total = grid.PointCount();
  // k * total / n without overflow: total = q * n + r with r < n.
  auto share = [shards](long long count, long long k) {
    const long long q = count / shards, r = count % shards;
    return q * k + r * k / shards;
  };
  if (grid.axes.size() <= 1) return {share(total, shard), share(total, shard + 1)};
  // Slices of the outer axis: its values [lo, hi) cover the points [lo*stride, hi*stride).
  const auto outer = static_cast<long long>(grid.axes.back().size());
  const long long stride = outer == 0 ? 0 : total / outer;
  return {share(outer, shard) * stride, share(outer, shard + 1) * stride};
}

namespace {

// Adds names not seen yet, up to kMaxUndeterminedNodes.
void AddUndetermined(const std::vector<std::string>& names, SweepStats* stats) {
  for (const std::string& n : names) {
    if (stats->undetermined_nodes.size() >= kMaxUndeterminedNodes) return;
    if (std::find(stats->undetermined_nodes.begin(), stats->undetermined_nodes.end(), n) ==
        stats->undetermined_nodes.end()) {
      stats->undetermined_nodes.push_back(n);
    }
  }
}

// The state of one worker thread: its own circuit copy and solver.
class Worker {
 public:
  Worker(const Circuit& circuit, const SweepGrid& grid, const ApplyPoint& apply,
         const SweepOptions& options, const PointSink& sink)
      : circuit_(circuit), grid_(grid), apply_(apply), options_(options), sink_(sink) {
    indices_.resize(grid.axes.size());
    values_.resize(grid.axes.size());
    trial_.resize(grid.axes.size());
  }

  std::string Init(const SolverOptions& solver_options) {
    Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit_, solver_options);
    if (!solver) return solver.errors().front().message;
    solver_ = std::move(solver).value();
    // A sweep shows the detail of failed points only (PointSink callers: CLI, Python).
    solver_->set_describe_converged(false);
    return "";
  }

  // Solves points [first, end) in continuation; reports and counts those from
  // `report_from` on.
  void SolveBlock(long long first, long long end, long long report_from) {
    bool have_prev = false;  // x1_ holds the last converged point of this block
    bool have_prev2 = false;
    for (long long index = first; index < end; ++index) {
      grid_.Indices(index, indices_);
      for (size_t a = 0; a < values_.size(); ++a) values_[a] = grid_.axes[a][indices_[a]];
      SolveSummary summary;
      bool ok = false;
      if (!Apply(values_, &summary)) {
        ok = false;
      } else if (!have_prev) {
        summary = solver_->Solve(&solution_);
        ok = summary.status == SolveStatus::kConverged;
      } else {
        ok = SolveWarm(have_prev2, &summary);
      }
      const bool reported = index >= report_from;
      if (reported) Account(summary);
      if (ok) {
        have_prev2 = have_prev;
        x2_.swap(x1_);
        p2_ = p1_;
        auto x = solver_->unknowns();
        x1_.assign(x.begin(), x.end());
        p1_ = values_[0];
        have_prev = true;
        if (reported) {
          if (options_.at_solution) options_.at_solution(index, *solver_, solution_);
          sink_(index, summary, &solution_);
        }
      } else {
        have_prev = have_prev2 = false;
        if (reported) {
          ++stats.failed;
          sink_(index, summary, nullptr);
        }
      }
    }
  }

  SweepStats stats;

 private:
  bool Apply(std::span<const double> values, SolveSummary* summary) {
    std::string problem = apply_(values, &circuit_);
    if (!problem.empty()) {
      summary->status = SolveStatus::kNonFinite;
      summary->detail = problem;
      return false;
    }
    solver_->UpdateValues(circuit_);
    return true;
  }

  // Warm start from the previous point (extrapolated when two are known); if that
  // fails, walk toward the point in halved steps; if that fails, a cold solve with the
  // aid ladder.
  bool SolveWarm(bool have_prev2, SolveSummary* summary) {
    int steps = 0;
    if (options_.extrapolate && have_prev2 && p1_ != p2_) {
      const double ratio = (values_[0] - p1_) / (p1_ - p2_);
      start_.resize(x1_.size());
      for (size_t i = 0; i < x1_.size(); ++i) start_[i] = x1_[i] + ratio * (x1_[i] - x2_[i]);
      *summary = solver_->Solve(&solution_, start_, /*allow_aids=*/false);
      steps += summary->newton_steps;
      if (summary->status == SolveStatus::kConverged) return true;
    }
    // Continuation from the previous point toward the target in fractions t of the step.
    start_ = x1_;
    double t = 0.0;
    double h = 1.0;
    bool subdivided = false;  // an aid only when a step was actually cut
    const double min_h = std::ldexp(1.0, -options_.max_halvings);
    while (t < 1.0 && h >= min_h) {
      const bool last = t + h >= 1.0;
      trial_ = values_;
      if (!last) trial_[0] = p1_ + (t + h) * (values_[0] - p1_);
      SolveSummary attempt;
      if (!Apply(trial_, &attempt)) break;
      attempt = solver_->Solve(&solution_, start_, /*allow_aids=*/false);
      steps += attempt.newton_steps;
      if (attempt.status == SolveStatus::kConverged) {
        auto x = solver_->unknowns();
        start_.assign(x.begin(), x.end());
        t = last ? 1.0 : t + h;
        h = std::min(2 * h, 1.0 - t);
        if (last) {
          *summary = attempt;
          summary->newton_steps = steps;
          if (subdivided) summary->aids.push_back("step subdivision");
          return true;
        }
      } else {
        h /= 2;
        subdivided = true;
      }
    }
    SolveSummary dummy;
    if (!Apply(values_, &dummy)) {
      *summary = dummy;
      return false;
    }
    *summary = solver_->Solve(&solution_);
    summary->newton_steps += steps;
    summary->aids.insert(summary->aids.begin(), "step subdivision");
    return summary->status == SolveStatus::kConverged;
  }

  void Account(const SolveSummary& summary) { AddSolveToStats(summary, &stats); }

  Circuit circuit_;
  const SweepGrid& grid_;
  const ApplyPoint& apply_;
  const SweepOptions& options_;
  const PointSink& sink_;
  std::unique_ptr<BiasSolver> solver_;
  Solution solution_;
  std::vector<long long> indices_;
  std::vector<double> values_, trial_;
  std::vector<double> x1_, x2_, start_;
  double p1_ = 0, p2_ = 0;
};

// The order of aids in a merged account does not depend on thread timing.
int AidRank(const std::string& aid) {
  if (aid == "step subdivision") return 0;
  if (aid.rfind("gmin", 0) == 0) return 1;
  if (aid.rfind("source", 0) == 0) return 2;
  if (aid.rfind("thermal", 0) == 0) return 3;
  return 4;
}

}  // namespace

SweepStats RunSweep(const Circuit& circuit, const SweepGrid& grid, const SweepBlocks& blocks,
                    long long first_point, long long end_point, const ApplyPoint& apply,
                    const SolverOptions& solver_options, const SweepOptions& options,
                    const PointSink& sink) {
  SweepStats total;
  if (first_point >= end_point) return total;
  const long long first_block = blocks.BlockOf(first_point);
  const long long last_block = blocks.BlockOf(end_point - 1) + 1;
  const long long block_count = last_block - first_block;
  const int jobs =
      static_cast<int>(std::max<long long>(1, std::min<long long>(options.jobs, block_count)));
  std::vector<std::unique_ptr<Worker>> workers;
  for (int j = 0; j < jobs; ++j) {
    workers.push_back(std::make_unique<Worker>(circuit, grid, apply, options, sink));
    std::string problem = workers.back()->Init(solver_options);
    if (!problem.empty()) {
      total.setup_error = problem;
      return total;
    }
  }
  std::atomic<long long> next{first_block};
  auto work = [&](Worker* worker) {
    for (long long b = next++; b < last_block; b = next++) {
      worker->SolveBlock(blocks.Start(b), std::min(blocks.Start(b + 1), end_point), first_point);
    }
  };
  if (jobs == 1) {
    work(workers.front().get());
  } else {
    std::vector<std::thread> threads;
    for (auto& w : workers) threads.emplace_back(work, w.get());
    for (auto& t : threads) t.join();
  }
  for (const auto& w : workers) MergeSweepStats(w->stats, &total);
  return total;
}

void AddSolveToStats(const SolveSummary& summary, SweepStats* stats) {
  ++stats->points;
  stats->newton_steps += summary.newton_steps;
  stats->max_newton_steps = std::max(stats->max_newton_steps, summary.newton_steps);
  if (std::find(stats->methods.begin(), stats->methods.end(), summary.method) ==
      stats->methods.end()) {
    stats->methods.push_back(summary.method);
  }
  for (const std::string& aid : summary.aids) {
    if (std::find(stats->aids.begin(), stats->aids.end(), aid) == stats->aids.end()) {
      stats->aids.push_back(aid);
    }
  }
  if (summary.status != SolveStatus::kConverged) return;
  stats->unique = stats->unique && summary.unique;
  AddUndetermined(summary.undetermined_nodes, stats);
  if (summary.max_kcl_residual > stats->max_kcl_residual) {
    stats->max_kcl_residual = summary.max_kcl_residual;
    stats->worst_node = summary.worst_node;
  }
  stats->heated = stats->heated || summary.heated;
  if (summary.heated && (stats->thermal_worst.empty() ||
                         summary.max_thermal_residual > stats->max_thermal_residual)) {
    stats->max_thermal_residual = summary.max_thermal_residual;
    stats->thermal_worst = summary.thermal_worst;
  }
}

void MergeSweepStats(const SweepStats& s, SweepStats* total) {
  total->points += s.points;
  total->failed += s.failed;
  total->newton_steps += s.newton_steps;
  total->max_newton_steps = std::max(total->max_newton_steps, s.max_newton_steps);
  for (SolverMethod m : s.methods) {
    if (std::find(total->methods.begin(), total->methods.end(), m) == total->methods.end()) {
      total->methods.push_back(m);
    }
  }
  total->unique = total->unique && s.unique;
  for (const std::string& aid : s.aids) {
    if (std::find(total->aids.begin(), total->aids.end(), aid) == total->aids.end()) {
      total->aids.push_back(aid);
    }
  }
  AddUndetermined(s.undetermined_nodes, total);
  if (s.max_kcl_residual > total->max_kcl_residual) {
    total->max_kcl_residual = s.max_kcl_residual;
    total->worst_node = s.worst_node;
  }
  total->heated = total->heated || s.heated;
  if (s.heated &&
      (total->thermal_worst.empty() || s.max_thermal_residual > total->max_thermal_residual)) {
    total->max_thermal_residual = s.max_thermal_residual;
    total->thermal_worst = s.thermal_worst;
  }
  if (total->setup_error.empty()) total->setup_error = s.setup_error;
  std::stable_sort(
      total->aids.begin(), total->aids.end(),
      [](const std::string& a, const std::string& b) { return AidRank(a) < AidRank(b); });
}

}  // namespace knee
