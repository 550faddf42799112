// knee sweep and the sweep requests of knee run: targets and ranges resolved, points
// applied to the circuit, the engine's continuation run, rows gathered in sweep order.
#include <fmt/format.h>
#include <unistd.h>

#include <atomic>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstdio>
#include <limits>
#include <mutex>
#include <thread>

#include "analyses.h"
#include "eng_format.h"
#include "knee/design_steps.h"
#include "knee/sweep.h"
#include "stress.h"

namespace knee::cli {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Shows a rising progress line on standard error while a sweep takes longer than a
// second, only when standard error is a terminal.
class Progress {
 public:
  Progress(long long total, bool enabled) : total_(total) {
    if (!enabled || !::isatty(STDERR_FILENO)) return;
    thread_ = std::thread([this] { Run(); });
  }
  ~Progress() {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      done_ = true;
    }
    wake_.notify_all();
    if (thread_.joinable()) thread_.join();
  }
  void Tick() { done_points_.fetch_add(1, std::memory_order_relaxed); }

 private:
  void Run() {
    std::unique_lock<std::mutex> lock(mutex_);
    if (wake_.wait_for(lock, std::chrono::seconds(1), [this] { return done_; })) return;
    bool shown = false;
    while (!done_) {
      const long long n = done_points_.load(std::memory_order_relaxed);
      std::fprintf(stderr, "\rsweep: %lld of %lld points (%.0f %%)  ", n, total_,
                   100.0 * static_cast<double>(n) / static_cast<double>(total_));
      shown = true;
      wake_.wait_for(lock, std::chrono::milliseconds(200), [this] { return done_; });
    }
    if (shown) std::fprintf(stderr, "\r%60s\r", "");
  }

  long long total_;
  std::atomic<long long> done_points_{0};
  std::mutex mutex_;
  std::condition_variable wake_;
  bool done_ = false;
  std::thread thread_;
};

std::string DescribePoint(const std::vector<SweepAxis>& axes, const Circuit& circuit,
                          std::span<const long long> indices) {
  std::string where;
  for (size_t a = 0; a < axes.size(); ++a) {
    if (a) where += ", ";
    where += fmt::format(
        "{} = {}", axes[a].target.name,
        FormatEng(axes[a].values[indices[a]], SweepTargetUnit(axes[a].target, circuit), 6));
  }
  return where;
}

}  // namespace

bool ParseShard(const std::string& text, int* shard, int* shards, std::string* problem) {
  if (text.empty()) {
    *shard = 0;
    *shards = 1;
    return true;
  }
  int k = 0, n = 0;
  char extra = 0;
  if (std::sscanf(text.c_str(), "%d/%d%c", &k, &n, &extra) != 2 || n < 1 || k < 1 || k > n) {
    *problem = fmt::format("--shard: '{}' is not K/N with 1 <= K <= N (e.g. --shard 2/8)", text);
    return false;
  }
  *shard = k - 1;
  *shards = n;
  return true;
}

std::optional<std::vector<SweepAxis>> ResolveCommandLineSweep(const LoadedDesign& loaded,
                                                              const AnalysisOptions& options) {
  std::vector<SweepAxis> axes;
  std::vector<Diagnostic> errors;
  for (const std::string& spec : options.sweeps) {
    SourceLocation where;
    where.file = "knee sweep";
    const size_t eq = spec.find('=');
    if (eq == std::string::npos || eq == 0) {
      errors.push_back({where,
                        fmt::format("'{}' is not TARGET=RANGE", spec),
                        "write for example Vline=-30..30:0.1 or temp=-40,25,85",
                        {}});
      continue;
    }
    Result<SweepAxis> axis =
        ResolveSweepAxis(spec.substr(0, eq), spec.substr(eq + 1), *loaded.netlist,
                         loaded.design->circuit, where, where);
    if (!axis) {
      for (const Diagnostic& d : axis.errors()) errors.push_back(d);
      continue;
    }
    axes.push_back(std::move(axis).value());
  }
  if (!errors.empty()) {
    PrintDiagnostics(errors, "");
    return std::nullopt;
  }
  return axes;
}

AnalysisResult AnalyzeSweep(const LoadedDesign& loaded, const std::vector<SweepAxis>& axes,
                            const std::vector<QuantityExpr>& show, const AnalysisOptions& options) {
  AnalysisResult result;
  Report& report = result.report;
  report = StartReport(loaded, "sweep");
  const Circuit& base = loaded.design->circuit;
  report.sweep_axes = static_cast<int>(axes.size());
  report.log_inner = !axes.empty() && axes.front().logarithmic;
  for (const SweepAxis& axis : axes) {
    report.columns.push_back({axis.target.name, SweepTargetUnit(axis.target, base)});
  }
  for (const QuantityExpr& q : show) report.columns.push_back({q.text(), q.unit()});
  const double derate = options.derate / 100;
  const std::vector<StressCheck> checks = CollectStressChecks(base, derate);
  AddStressColumns(checks, base, &report);
  report.account.method = SolverMethodName(options.solver);

  int shard = 0, shards = 1;
  std::string problem;
  if (!ParseShard(options.shard, &shard, &shards, &problem)) {
    fmt::print(stderr, "knee: error: {}\n", problem);
    result.outcome.bad_input = true;
    return result;
  }

  const SweepGrid grid = MakeSweepGrid(axes);
  SweepOptions sweep_options;
  sweep_options.jobs = options.jobs > 0
                           ? options.jobs
                           : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const SweepBlocks blocks = CutIntoBlocks(grid, sweep_options.block_size);
  const auto [first_block, last_block] = ShardBlocks(grid, blocks, shard, shards);
  report.csv_header = shard == 0;
  const long long first_point = blocks.starts[first_block];
  const long long end_point = blocks.starts[last_block];

  const ApplyPoint apply = MakePointApplier(*loaded.netlist, loaded.overrides, axes);

  const size_t width = report.columns.size();
  report.rows.assign(static_cast<size_t>(end_point - first_point),
                     std::vector<double>(width, kNaN));
  std::vector<std::string> failure_why(report.rows.size());
  Progress progress(end_point - first_point, !options.quiet);
  StressRecorder stress(checks, end_point - first_point);
  std::vector<double> largest_voltage(report.rows.size(), 0.0);
  const size_t stress_column = axes.size() + show.size();
  PointSink sink = [&](long long index, const SolveSummary& summary, const Solution* solution) {
    std::vector<double>& row = report.rows[static_cast<size_t>(index - first_point)];
    thread_local std::vector<long long> indices;  // per worker thread, reused across points
    indices.resize(axes.size());
    grid.Indices(index, indices);
    for (size_t a = 0; a < axes.size(); ++a) row[a] = axes[a].values[indices[a]];
    if (solution) {
      for (size_t q = 0; q < show.size(); ++q) row[axes.size() + q] = show[q].Evaluate(*solution);
      FillStressColumns(checks, *solution, row.data() + stress_column);
      stress.Record(index - first_point, *solution);
      largest_voltage[static_cast<size_t>(index - first_point)] = LargestVoltage(base, *solution);
    } else {
      failure_why[static_cast<size_t>(index - first_point)] = DescribeFailure(summary);
    }
    progress.Tick();
  };
  SweepStats stats = RunSweep(base, grid, blocks, first_block, last_block, apply, options.solver,
                              sweep_options, sink);
  if (!stats.setup_error.empty()) {
    fmt::print(stderr, "knee: error: {}\n", stats.setup_error);
    result.outcome.bad_input = true;
    return result;
  }
  for (size_t r = 0; r < report.rows.size(); ++r) {
    if (failure_why[r].empty()) continue;
    std::vector<long long> indices(axes.size());
    grid.Indices(first_point + static_cast<long long>(r), indices);
    report.failures.push_back(
        {static_cast<long long>(r), DescribePoint(axes, base, indices), failure_why[r]});
  }
  auto describe = [&](long long row) {
    std::vector<long long> indices(axes.size());
    grid.Indices(first_point + row, indices);
    return DescribePoint(axes, base, indices);
  };
  stress.Finish(base, derate, describe, &report);
  for (const StressLine& line : report.stress) result.outcome.stress_failed |= line.exceeded;
  // The caution also covers source values swept past the limit at points that failed.
  double largest = 0;
  for (double v : largest_voltage) largest = std::max(largest, v);
  for (const SweepAxis& axis : axes) {
    const bool source = axis.target.kind == SweepTarget::Kind::kElement &&
                        base.elements[axis.target.index].kind == ElementKind::kVoltageSource;
    if (!source) continue;
    for (double v : axis.values) largest = std::max(largest, std::fabs(v));
  }
  if (std::string caution = HighVoltageCaution(largest); !caution.empty()) {
    report.cautions.push_back(caution);
  }
  SolverAccount& account = report.account;
  account.points = stats.points;
  account.newton_steps = stats.newton_steps;
  account.max_newton_steps = stats.max_newton_steps;
  account.aids = stats.aids;
  if (!stats.methods.empty()) {
    std::string methods;
    for (SolverMethod m : stats.methods) {
      methods += (methods.empty() ? "" : "; ") +
                 std::string(SolverMethodName(m, options.solver.junction_limiting));
    }
    account.method = methods;
  }
  account.unique = stats.unique && stats.points > stats.failed;
  account.max_kcl_residual = stats.max_kcl_residual;
  account.worst_node = stats.worst_node;
  account.faint_nodes = stats.faint_nodes;
  account.current_tol = options.solver.abs_current_tol;
  result.outcome.point_failed = stats.failed > 0;
  return result;
}

}  // namespace knee::cli
