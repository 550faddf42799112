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
#include <optional>
#include <span>
#include <string_view>
#include <thread>

#include "analyses.h"
#include "bounds.h"
#include "eng_format.h"
#include "knee/design_steps.h"
#include "knee/sweep.h"
#include "sensitivity.h"
#include "stress.h"
#include "svg_chart.h"

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

// Why a sweep whose point count does not fit a long long is refused.
std::string TooManyToCount(const std::vector<SweepAxis>& axes) {
  std::vector<std::string> sizes;
  for (const SweepAxis& axis : axes) sizes.push_back(std::to_string(axis.values.size()));
  return fmt::format(
      "the sweep has {} points, more than the {} a sweep can count; sweep fewer "
      "values",
      fmt::join(sizes, " x "), std::numeric_limits<long long>::max());
}

// Why a held report (table, JSON, chart) of this many points is refused.
std::string TooLargeToHold(long long points, size_t width, ReportFormat format) {
  const char* held = format == ReportFormat::kJson    ? "a JSON report"
                     : format == ReportFormat::kTable ? "a table"
                                                      : "a chart";
  return fmt::format(
      "this sweep has {} points of {} values each, more than the {} values {} holds in "
      "memory; write CSV without --plot (streamed as it is solved, with no limit), sweep "
      "fewer points, or split it with --shard",
      points, width, kMaxHeldValues, held);
}

// Where each variable (param or temp) of each shown expression takes its value at a sweep
// point: the point's value of a sweep axis that is that param or temp; for another param
// in a sweep over params, the param re-evaluated at the point (it may depend on a swept
// one); else its nominal value.
class ExpressionVariables {
 public:
  ExpressionVariables(const std::vector<SweepAxis>& axes, const std::vector<QuantityExpr>& show) {
    bool any_param = false;
    for (const SweepAxis& axis : axes) any_param |= axis.target.kind == SweepTarget::Kind::kParam;
    sources_.resize(show.size());
    for (size_t q = 0; q < show.size(); ++q) {
      for (const std::string& name : show[q].variables()) {
        Source source;
        for (size_t a = 0; a < axes.size(); ++a) {
          const SweepTarget& t = axes[a].target;
          const bool temp = name == "temp" && t.kind == SweepTarget::Kind::kTemp;
          const bool param = t.kind == SweepTarget::Kind::kParam && t.name == name;
          if (temp || param) source.axis = static_cast<int>(a);
        }
        source.derived = source.axis < 0 && name != "temp" && any_param;
        needs_params_ |= source.derived;
        sources_[q].push_back(source);
      }
    }
  }
  bool needs_params() const { return needs_params_; }

  double Evaluate(size_t q, const QuantityExpr& expr, std::span<const double> point,
                  const ParamValues& params, const Solution& solution) const {
    if (expr.variables().empty()) return expr.Evaluate(solution);
    std::vector<double> values = expr.nominal();
    for (size_t v = 0; v < values.size(); ++v) {
      const Source& source = sources_[q][v];
      if (source.axis >= 0) values[v] = point[static_cast<size_t>(source.axis)];
      if (!source.derived) continue;
      for (const auto& [name, value] : params) {
        if (name == expr.variables()[v]) values[v] = value;
      }
    }
    return expr.Evaluate(solution, values);
  }

 private:
  struct Source {
    int axis = -1;         // the sweep axis that sets it, or -1
    bool derived = false;  // a param to re-evaluate at each point
  };
  std::vector<std::vector<Source>> sources_;  // per shown quantity, per variable
  bool needs_params_ = false;
};

}  // namespace

bool ParseShard(const std::string& text, int* shard, int* shards, std::string* problem) {
  if (text.empty()) {
    *shard = 0;
    *shards = 1;
    return true;
  }
  // Whole decimal numbers only, range-checked before narrowing: 4294967297/2 must not
  // wrap to 1/2.
  auto whole = [](std::string_view digits, long long* value) {
    if (digits.empty() || digits.size() > 10) return false;
    *value = 0;
    for (char c : digits) {
      if (c < '0' || c > '9') return false;
      *value = *value * 10 + (c - '0');
    }
    return true;
  };
  const size_t slash = text.find('/');
  long long k = 0, n = 0;
  const bool ok = slash != std::string::npos &&
                  whole(std::string_view(text).substr(0, slash), &k) &&
                  whole(std::string_view(text).substr(slash + 1), &n) && n >= 1 &&
                  n <= kMaxShards && k >= 1 && k <= n;
  if (!ok) {
    *problem = fmt::format("--shard: '{}' is not K/N with 1 <= K <= N <= {} (e.g. --shard 2/8)",
                           text, kMaxShards);
    return false;
  }
  *shard = static_cast<int>(k - 1);
  *shards = static_cast<int>(n);
  return true;
}

void PrintPointFailure(const PointFailure& f) {
  // The reason may itself begin with the status ("no solution: no DC solution: ...").
  constexpr std::string_view kStatus = "no solution: ";
  const std::string_view why = std::string_view(f.why).starts_with(kStatus)
                                   ? std::string_view(f.why).substr(kStatus.size())
                                   : std::string_view(f.why);
  fmt::print(stderr, "knee: no solution{}: {}\n", f.where.empty() ? "" : " at " + f.where, why);
}

std::optional<std::vector<SweepAxis>> ResolveCommandLineSweep(const LoadedDesign& loaded,
                                                              const AnalysisOptions& options) {
  std::vector<SweepAxis> axes;
  std::vector<Diagnostic> errors;
  long long values = 0;  // of all ranges, against kMaxSweepValues
  for (const std::string& spec : options.sweeps) {
    const SourceLocation where = OptionLocation(spec);
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
    values += static_cast<long long>(axis->values.size());
    if (values > kMaxSweepValues) {
      errors.push_back({where,
                        fmt::format("the sweep ranges of this command line hold at least {} "
                                    "values together; the limit is {}",
                                    values, kMaxSweepValues),
                        "sweep fewer points, or split the sweep into several runs",
                        {}});
      break;
    }
    axes.push_back(std::move(axis).value());
  }
  if (!errors.empty()) {
    PrintOptionDiagnostics(std::move(errors));
    return std::nullopt;
  }
  return axes;
}

long long HeldSweepValues(const LoadedDesign& loaded, const std::vector<SweepAxis>& axes,
                          size_t shown, const AnalysisOptions& options) {
  SweepGrid grid;
  for (const SweepAxis& axis : axes) grid.axes.push_back(axis.values);
  int shard = 0, shards = 1;
  std::string problem;
  if (!grid.CheckedPointCount() || !ParseShard(options.shard, &shard, &shards, &problem)) {
    return std::numeric_limits<long long>::max();
  }
  const auto [first, end] = ShardPoints(grid, shard, shards);
  const size_t checks = CollectStressChecks(loaded.design->circuit, options.derate / 100).size();
  long long values = 0;
  if (__builtin_mul_overflow(end - first, static_cast<long long>(axes.size() + shown + checks),
                             &values)) {
    return std::numeric_limits<long long>::max();
  }
  return values;
}

AnalysisResult AnalyzeSweep(const LoadedDesign& loaded, const std::vector<SweepAxis>& axes,
                            const std::vector<QuantityExpr>& show, const AnalysisOptions& options,
                            const TextSink* stream) {
  AnalysisResult result;
  Report& report = result.report;
  report = StartReport(loaded, "sweep");
  const Circuit& base = loaded.design->circuit;
  report.sweep_axes = static_cast<int>(axes.size());
  report.log_inner = !axes.empty() && axes.front().logarithmic;
  for (const SweepAxis& axis : axes) {
    report.columns.push_back({axis.target.name, SweepTargetUnit(axis.target, base)});
    report.temp_swept |= axis.target.kind == SweepTarget::Kind::kTemp;
  }
  for (const QuantityExpr& q : show) report.columns.push_back({q.text(), q.unit()});
  // --sensitivity Q: one column dQ/dTARGET per number of the circuit (docs/sensitivity.md).
  std::optional<SweepSensitivity> sensitivity;
  if (!options.sweep_sensitivity.empty()) {
    sensitivity = PrepareSweepSensitivity(*loaded.design, axes, options.sweep_sensitivity);
    if (!sensitivity) {
      result.outcome.bad_input = true;
      return result;
    }
    for (const Column& c : sensitivity->columns) report.columns.push_back(c);
  }
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
  if (!grid.CheckedPointCount()) {
    fmt::print(stderr, "knee: error: {}\n", TooManyToCount(axes));
    result.outcome.bad_input = true;
    return result;
  }
  SweepOptions sweep_options;
  sweep_options.jobs = options.jobs > 0
                           ? options.jobs
                           : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const SweepBlocks blocks = CutIntoBlocks(grid, sweep_options.block_size);
  const auto [first_point, end_point] = ShardPoints(grid, shard, shards);
  report.csv_header = shard == 0;
  const long long slice_points = end_point - first_point;
  const size_t width = report.columns.size();
  if (!stream &&
      slice_points > kMaxHeldValues / static_cast<long long>(std::max<size_t>(width, 1))) {
    fmt::print(stderr, "knee: error: {}\n", TooLargeToHold(slice_points, width, options.format));
    result.outcome.bad_input = true;
    return result;
  }

  // Applies one point (the steps every front end shares); param axes re-evaluate the
  // netlist's expressions, which the shown expressions' params follow too.
  const Netlist& netlist = *loaded.netlist;
  const Overrides& base_overrides = loaded.overrides;
  auto param_overrides = [&](std::span<const double> values) {
    Overrides overrides = base_overrides;
    for (size_t a = 0; a < axes.size(); ++a) {
      if (axes[a].target.kind == SweepTarget::Kind::kParam) {
        overrides.sets.push_back({axes[a].target.name, FormatRoundTrip(values[a])});
      }
    }
    return overrides;
  };
  const ApplyPoint apply = MakePointApplier(netlist, base_overrides, axes);

  const ExpressionVariables variables(axes, show);

  // A streamed sweep with --plot keeps a sample of its rows for the chart.
  std::optional<ChartSample> sample;
  if (stream && !options.plot_path.empty()) {
    ChartOptions chart;
    chart.log_x = report.log_inner;
    const long long lines =
        axes.empty() || slice_points == 0 ? 0 : (slice_points + blocks.line - 1) / blocks.line;
    const long long most = ChartSample::MostRows(lines, report, chart);
    if (most > kMaxHeldValues / static_cast<long long>(std::max<size_t>(width, 1))) {
      fmt::print(stderr,
                 "knee: error: --plot: a chart of this sweep would keep up to {} rows of {} "
                 "values ({} combinations of outer values), more than the {} values a chart "
                 "holds in memory; sweep fewer outer values, or leave out --plot\n",
                 most, width, lines, kMaxHeldValues);
      result.outcome.bad_input = true;
      return result;
    }
    double x_lo = INFINITY, x_hi = -INFINITY;
    const std::vector<double>& inner = axes.front().values;
    const size_t from = axes.size() == 1 ? static_cast<size_t>(first_point) : 0;
    const size_t to = axes.size() == 1   ? static_cast<size_t>(end_point)
                      : slice_points > 0 ? inner.size()
                                         : 0;
    for (size_t i = from; i < to; ++i) {
      if (std::isfinite(inner[i]) && (!chart.log_x || inner[i] > 0)) {
        x_lo = std::min(x_lo, inner[i]);
        x_hi = std::max(x_hi, inner[i]);
      }
    }
    sample.emplace(report, chart, x_lo, x_hi);
  }
  std::vector<char> window_over;

  // The slice is solved a window of blocks at a time when streaming (rows written and
  // dropped after each window), else in one window holding every row.
  const long long window_blocks = 32LL * sweep_options.jobs;
  Progress progress(slice_points, !options.quiet);
  StressRecorder stress(checks);
  // Bounds are reduced over the whole slice (every point's margin is kept).
  BoundRecorder bounds(loaded.design->expects, slice_points);
  const size_t sensitivity_column = axes.size() + show.size();
  const size_t stress_column =
      sensitivity_column + (sensitivity ? sensitivity->columns.size() : size_t{0});
  std::vector<std::string> failure_why;
  std::vector<double> largest_voltage;
  double largest = 0;
  SweepStats stats;
  long long window_first = first_point;  // sweep point of report.rows[0]
  if (sensitivity) {
    sweep_options.at_solution = [&](long long index, BiasSolver& solver, const Solution& s) {
      std::vector<double>& row = report.rows[static_cast<size_t>(index - window_first)];
      FillSweepSensitivity(*sensitivity, *loaded.design, solver, s,
                           row.data() + sensitivity_column);
    };
  }
  PointSink sink = [&](long long index, const SolveSummary& summary, const Solution* solution) {
    const auto r = static_cast<size_t>(index - window_first);
    std::vector<double>& row = report.rows[r];
    thread_local std::vector<long long> indices;  // per worker thread, reused across points
    indices.resize(axes.size());
    grid.Indices(index, indices);
    for (size_t a = 0; a < axes.size(); ++a) row[a] = axes[a].values[indices[a]];
    if (solution) {
      const std::span<const double> point(row.data(), axes.size());
      ParamValues params;
      if (variables.needs_params()) {
        Result<ParamValues> elaborated = ElaborateParams(netlist, param_overrides(point));
        if (elaborated) params = std::move(elaborated).value();
      }
      for (size_t q = 0; q < show.size(); ++q) {
        row[axes.size() + q] = variables.Evaluate(q, show[q], point, params, *solution);
      }
      FillStressColumns(checks, *solution, row.data() + stress_column);
      stress.Record(index - first_point, *solution);
      bounds.Record(index - first_point, *solution);
      largest_voltage[r] = LargestVoltage(base, *solution);
    } else {
      failure_why[r] = DescribeFailure(summary);
    }
    progress.Tick();
  };
  bool header_due = stream && report.csv_header;
  for (long long start = first_point; start < end_point || header_due;) {
    const long long stop =
        stream && start < end_point
            ? std::min(end_point, blocks.Start(blocks.BlockOf(start) + window_blocks))
            : end_point;
    const auto count = static_cast<size_t>(stop - start);
    window_first = start;
    report.rows.assign(count, std::vector<double>(width, kNaN));
    failure_why.assign(count, std::string());
    largest_voltage.assign(count, 0.0);
    stress.BeginWindow(start - first_point, stop - start);
    const SweepStats part =
        RunSweep(base, grid, blocks, start, stop, apply, options.solver, sweep_options, sink);
    if (!part.setup_error.empty()) {
      fmt::print(stderr, "knee: error: {}\n", part.setup_error);
      result.outcome.bad_input = true;
      return result;
    }
    MergeSweepStats(part, &stats);
    window_over.clear();
    stress.EndWindow(!stream ? &report.row_over_rating : sample ? &window_over : nullptr);
    for (double v : largest_voltage) largest = std::max(largest, v);
    for (size_t r = 0; r < count; ++r) {
      if (failure_why[r].empty()) continue;
      std::vector<long long> indices(axes.size());
      grid.Indices(start + static_cast<long long>(r), indices);
      report.failures.push_back({start - first_point + static_cast<long long>(r),
                                 DescribePoint(axes, base, indices), failure_why[r]});
    }
    if (stream) {
      std::string text = header_due ? WriteCsvHeader(report) : std::string();
      header_due = false;
      text += WriteCsvRows(report);
      if (sample) sample->Add(report.rows, window_over);
      report.rows.clear();
      if (std::string trouble = (*stream)(text); !trouble.empty()) {
        fmt::print(stderr, "knee: error: {}\n", trouble);
        result.outcome.bad_input = true;
        return result;
      }
      result.outcome.point_failed |= !report.failures.empty();
      if (!options.quiet) {
        for (const PointFailure& f : report.failures) PrintPointFailure(f);
      }
      report.failures.clear();
    }
    start = stop;
  }
  if (sample) sample->MoveInto(&report);
  auto describe = [&](long long row) {
    std::vector<long long> indices(axes.size());
    grid.Indices(first_point + row, indices);
    return DescribePoint(axes, base, indices);
  };
  stress.Finish(base, derate, describe, &report);
  if (!bounds.Finish(describe, &report)) result.outcome.expect_missed = true;
  for (const StressLine& line : report.stress) result.outcome.stress_failed |= line.exceeded;
  // The caution also covers source values swept past the limit at points that failed.
  for (const SweepAxis& axis : axes) {
    const bool source = axis.target.kind == SweepTarget::Kind::kElement &&
                        base.elements[axis.target.index].kind == ElementKind::kVoltageSource;
    if (!source) continue;
    for (double v : axis.values) largest = std::max(largest, std::fabs(v));
  }
  if (std::string caution = HighVoltageCaution(largest); !caution.empty()) {
    report.cautions.push_back(caution);
  }
  report.account = AccountOf(stats, options.solver);
  result.outcome.point_failed = stats.failed > 0;
  return result;
}

}  // namespace knee::cli
