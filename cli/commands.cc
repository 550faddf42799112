#include "commands.h"

#include <fmt/format.h>

#include <algorithm>
#include <cstdio>
#include <limits>
#include <nlohmann/json.hpp>
#include <span>
#include <string>
#include <string_view>

#include "analyses.h"
#include "eng_format.h"
#include "knee/part_report.h"
#include "knee/sweep.h"
#include "output.h"
#include "pipeline.h"
#include "spread.h"
#include "svg_chart.h"

namespace knee::cli {
namespace {

std::string Count(long long n, const char* one, const char* many) {
  return fmt::format("{} {}", n, n == 1 ? one : many);
}

std::string Combine(const std::vector<AnalysisResult>& results, ReportFormat format) {
  if (results.size() == 1) return WriteReport(results.front().report, format);
  if (format == ReportFormat::kJson) {
    nlohmann::ordered_json j;
    j["format"] = "knee-result/1";
    j["title"] = results.front().report.title;
    j["file"] = results.front().report.file;
    j["analysis"] = "run";
    j["results"] = nlohmann::ordered_json::array();
    for (const AnalysisResult& r : results) {
      j["results"].push_back(nlohmann::ordered_json::parse(WriteJson(r.report)));
    }
    return j.dump(2) + "\n";
  }
  // Table and CSV: one block per analysis, separated by one empty line.
  std::string out;
  for (size_t i = 0; i < results.size(); ++i) {
    if (i) out += "\n";
    out += WriteReport(results[i].report, format);
  }
  return out;
}

// PATH.svg for the first chart, PATH-2.svg, PATH-3.svg ... for further ones.
std::string ChartPath(const std::string& path, int index) {
  if (index == 0) return path;
  const size_t dot = path.rfind('.');
  const size_t slash = path.rfind('/');
  const bool has_ext = dot != std::string::npos && (slash == std::string::npos || dot > slash);
  const std::string stem = has_ext ? path.substr(0, dot) : path;
  return fmt::format("{}-{}{}", stem, index + 1, has_ext ? path.substr(dot) : "");
}

// Writes the charts of every sweep; "" or a message.
std::string DrawCharts(const std::vector<AnalysisResult>& results, const AnalysisOptions& options) {
  if (options.plot_path.empty()) return "";
  int drawn = 0;
  for (const AnalysisResult& r : results) {
    if (r.report.sweep_axes == 0 || r.report.rows.empty()) continue;
    ChartOptions chart;
    chart.log_x = r.report.log_inner;
    chart.log_current = options.plot_log_current;
    std::string problem =
        WriteFileAtomically(ChartPath(options.plot_path, drawn), DrawSweepChart(r.report, chart));
    if (!problem.empty()) return "--plot: " + problem;
    ++drawn;
  }
  if (drawn == 0 && !options.quiet) {
    fmt::print(stderr, "knee: note: --plot: nothing to draw (no sweep in this analysis)\n");
  }
  return "";
}

// The point failures and missed expectations of every analysis, on standard error.
void PrintMisses(const std::vector<AnalysisResult>& results, const AnalysisOptions& options) {
  if (options.quiet) return;
  for (const AnalysisResult& r : results) {
    for (const PointFailure& f : r.report.failures) PrintPointFailure(f);
    for (const ExpectationCheck& e : r.report.expectations) {
      if (e.met) continue;
      if (e.relation != "=") {
        fmt::print(
            stderr, "knee: bound missed: {} {} {}: broken at {} of {} points, first{} ({})\n",
            e.quantity, e.relation,
            e.bound_text.empty() ? FormatEng(e.expected, e.unit, 6) : e.bound_text, e.failed_points,
            e.points, e.first_where.empty() ? " at the bias point" : " at " + e.first_where,
            FormatEng(e.first_actual, e.unit, 6));
        continue;
      }
      fmt::print(stderr, "knee: expectation missed: {} expected {}, exact {}\n", e.quantity,
                 FormatEng(e.expected, e.unit, 6), FormatEng(e.actual, e.unit, 6));
    }
  }
}

int Emit(const std::vector<AnalysisResult>& results, const AnalysisOptions& options) {
  Outcome outcome;
  for (const AnalysisResult& r : results) outcome.Merge(r.outcome);
  if (std::string problem = DrawCharts(results, options); !problem.empty()) {
    fmt::print(stderr, "knee: error: {}\n", problem);
    outcome.bad_input = true;
  }
  const std::string text = Combine(results, options.format);
  std::string problem =
      options.out_path.empty() ? WriteStdout(text) : WriteFileAtomically(options.out_path, text);
  if (!problem.empty()) {
    fmt::print(stderr, "knee: error: {}\n", problem);
    outcome.bad_input = true;
  }
  PrintMisses(results, options);
  return static_cast<int>(outcome.Status());
}

// knee check --parts: every key of every part as resolved, defaults marked.
std::string PartsText(const LoadedDesign& loaded) {
  std::string out;
  for (const Part& part : loaded.design->circuit.parts) {
    out += fmt::format("\npart {} diode\n", part.name);
    for (const ResolvedPartKey& k : ResolvePartKeys(*loaded.netlist, loaded.overrides, part)) {
      const std::string value = k.value ? FormatEng(*k.value, k.unit, 6) : std::string("none");
      out += k.given ? fmt::format("  {:<19} {}\n", k.key, value)
                     : fmt::format("  {:<19} {:<14}  (default)\n", k.key, value);
    }
  }
  return out;
}

// Options, netlist and quantities to show: what every analysis command starts from.
struct Start {
  LoadedDesign loaded;
  std::vector<QuantityExpr> show;
};

// CSV is streamed (docs/sweeps.md, "Limits"): without a chart always; with one when the
// rows held for it would pass the limit, the chart then drawn from a sample of the rows.
bool Streams(const Start& start, const std::vector<const std::vector<SweepAxis>*>& sweeps,
             const AnalysisOptions& options) {
  if (options.format != ReportFormat::kCsv) return false;
  if (options.plot_path.empty()) return true;
  long long held = 0;
  for (const std::vector<SweepAxis>* axes : sweeps) {
    const long long values = HeldSweepValues(start.loaded, *axes, start.show.size(), options);
    held = values > std::numeric_limits<long long>::max() - held
               ? std::numeric_limits<long long>::max()
               : held + values;
  }
  return held > kMaxHeldValues;
}

// The bias point (when asked for) and the sweeps, in order, each one's CSV written as it
// is produced (a sweep's rows as its windows of blocks finish), separated by one empty
// line as Combine does; --out is still replaced whole or not at all.
int RunStreamed(const Start& start, bool bias, std::span<const std::vector<SweepAxis>> sweeps,
                const AnalysisOptions& options) {
  OutputStream out;
  if (std::string problem = out.Open(options.out_path); !problem.empty()) return FailWith(problem);
  const TextSink sink = [&out](std::string_view text) { return out.Write(text); };
  std::vector<AnalysisResult> results;
  auto separate = [&]() { return results.empty() ? std::string() : out.Write("\n"); };
  if (bias) {
    AnalysisResult r = AnalyzeBias(start.loaded, start.show, options);
    if (r.outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
    std::string problem = out.Write(WriteReport(r.report, ReportFormat::kCsv));
    if (!problem.empty()) return FailWith(problem);
    results.push_back(std::move(r));
  }
  for (const std::vector<SweepAxis>& axes : sweeps) {
    if (std::string problem = separate(); !problem.empty()) return FailWith(problem);
    results.push_back(AnalyzeSweep(start.loaded, axes, start.show, options, &sink));
    if (results.back().outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
  }
  if (std::string problem = out.Commit(); !problem.empty()) return FailWith(problem);
  if (std::string problem = DrawCharts(results, options); !problem.empty()) {
    return FailWith(problem);
  }
  PrintMisses(results, options);  // the sweeps' failures were printed as they were found
  Outcome outcome;
  for (const AnalysisResult& r : results) outcome.Merge(r.outcome);
  return static_cast<int>(outcome.Status());
}

// Returns the exit status when something is wrong (after saying what), else fills *start.
std::optional<int> StartAnalysis(const std::string& file, AnalysisOptions* options,
                                 std::optional<Start>* start,
                                 SourceKept kept = SourceKept::kWhole) {
  std::string problem = PrepareOptions(options);
  if (!problem.empty()) return FailWith(problem);
  std::optional<LoadedDesign> loaded = LoadDesign(file, *options, kept);
  if (!loaded) return static_cast<int>(ExitStatus::kBadInput);
  std::optional<std::vector<QuantityExpr>> show = ResolveShow(*loaded, *options);
  if (!show) return static_cast<int>(ExitStatus::kBadInput);
  start->emplace(Start{std::move(*loaded), std::move(*show)});
  return std::nullopt;
}

}  // namespace

int FailWith(const std::string& message) {
  fmt::print(stderr, "knee: error: {}\n", message);
  return static_cast<int>(ExitStatus::kBadInput);
}

std::string PrepareOptions(AnalysisOptions* options) {
  std::string problem = FinishOptions(options);
  if (!problem.empty()) return problem;
  int shard = 0, shards = 1;
  if (!ParseShard(options->shard, &shard, &shards, &problem)) return problem;
  if (!options->out_path.empty()) {
    problem = CheckWritable(options->out_path);
    if (!problem.empty()) return "--out: " + problem;
  }
  if (!options->plot_path.empty()) {
    problem = CheckWritable(options->plot_path);
    if (!problem.empty()) return "--plot: " + problem;
  }
  return "";
}

int RunCheck(const std::string& file, AnalysisOptions options) {
  std::string problem = PrepareOptions(&options);
  if (!problem.empty()) return FailWith(problem);
  std::optional<LoadedDesign> loaded = LoadDesign(file, options);
  if (!loaded) return static_cast<int>(ExitStatus::kBadInput);
  if (!ResolveShow(*loaded, options)) return static_cast<int>(ExitStatus::kBadInput);
  const Circuit& c = loaded->design->circuit;
  int counts[4] = {0, 0, 0, 0};
  for (const Element& e : c.elements) ++counts[static_cast<int>(e.kind)];
  static constexpr const char* kKindNames[4][2] = {{"resistor", "resistors"},
                                                   {"voltage source", "voltage sources"},
                                                   {"current source", "current sources"},
                                                   {"diode", "diodes"}};
  std::vector<std::string> kinds;
  for (int k = 0; k < 4; ++k) {
    if (counts[k] > 0) kinds.push_back(Count(counts[k], kKindNames[k][0], kKindNames[k][1]));
  }
  std::vector<std::string> requests;
  if (loaded->design->bias_requested) requests.push_back("bias point");
  for (const auto& sweep : loaded->design->sweeps) {
    SweepGrid grid;
    for (const SweepAxis& axis : sweep) grid.axes.push_back(axis.values);
    const std::optional<long long> points = grid.CheckedPointCount();
    if (!points) {
      return FailWith(
          fmt::format("a sweep of the file has more than {} points, the most a sweep "
                      "can count; sweep fewer values",
                      std::numeric_limits<long long>::max()));
    }
    requests.push_back(fmt::format("sweep of {}", Count(*points, "point", "points")));
  }
  if (!loaded->design->expects.empty()) {
    requests.push_back(Count(static_cast<long long>(loaded->design->expects.size()), "expectation",
                             "expectations"));
  }
  std::string text = fmt::format(
      "{}: ok: {} besides gnd, {} ({}), {}; requests: {}\n",
      loaded->file == "-" ? "<stdin>" : loaded->file,
      Count(static_cast<long long>(c.nodes.size()) - 1, "node", "nodes"),
      Count(static_cast<long long>(c.elements.size()), "element", "elements"),
      fmt::join(kinds, ", "), Count(static_cast<long long>(c.parts.size()), "part", "parts"),
      requests.empty() ? std::string("none") : fmt::format("{}", fmt::join(requests, ", ")));
  if (options.parts) text += PartsText(*loaded);
  problem =
      options.out_path.empty() ? WriteStdout(text) : WriteFileAtomically(options.out_path, text);
  if (!problem.empty()) return FailWith(problem);
  return 0;
}

int RunBias(const std::string& file, AnalysisOptions options) {
  std::optional<Start> start;
  // A bias point needs the circuit, not the parsed statements nor the text: the text is
  // dropped once parsed (the elaboration's diagnostics read the file again), the
  // statements before the solve, which lowers the peak memory of a large netlist by their
  // size. What is printed after loading quotes no line of the text: the solver's
  // diagnostics carry no source location (they name elements and nodes).
  if (std::optional<int> status =
          StartAnalysis(file, &options, &start, SourceKept::kForDiagnostics)) {
    return *status;
  }
  start->loaded.netlist.reset();
  std::string().swap(start->loaded.source);
  std::vector<AnalysisResult> results;
  results.push_back(AnalyzeBias(start->loaded, start->show, options));
  if (results.back().outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
  return Emit(results, options);
}

int RunSweep(const std::string& file, AnalysisOptions options) {
  std::optional<Start> start;
  if (std::optional<int> status = StartAnalysis(file, &options, &start)) return *status;
  std::optional<std::vector<SweepAxis>> axes = ResolveCommandLineSweep(start->loaded, options);
  if (!axes) return static_cast<int>(ExitStatus::kBadInput);
  if (Streams(*start, {&*axes}, options)) return RunStreamed(*start, false, {&*axes, 1}, options);
  std::vector<AnalysisResult> results;
  results.push_back(AnalyzeSweep(start->loaded, *axes, start->show, options));
  if (results.back().outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
  return Emit(results, options);
}

int RunRun(const std::string& file, AnalysisOptions options) {
  std::optional<Start> start;
  if (std::optional<int> status = StartAnalysis(file, &options, &start)) return *status;
  const Design& design = *start->loaded.design;
  std::vector<const std::vector<SweepAxis>*> sweeps;
  for (const std::vector<SweepAxis>& axes : design.sweeps) sweeps.push_back(&axes);
  // An expected value is checked at the bias point; bounds alone do not ask for one (they
  // are checked at whatever points the file's analyses solve).
  const bool hand_values = std::any_of(design.expects.begin(), design.expects.end(),
                                       [](const Expectation& e) { return !e.is_bound(); });
  if (Streams(*start, sweeps, options)) {
    return RunStreamed(*start, design.bias_requested || hand_values, design.sweeps, options);
  }
  // The held reports of all the run's sweeps are kept at once: their sum is limited (each
  // sweep alone is checked again by AnalyzeSweep, which names the format).
  long long held = 0;
  for (const std::vector<SweepAxis>& axes : design.sweeps) {
    const long long values = HeldSweepValues(start->loaded, axes, start->show.size(), options);
    held = values > std::numeric_limits<long long>::max() - held
               ? std::numeric_limits<long long>::max()
               : held + values;
  }
  if (design.sweeps.size() > 1 && held > kMaxHeldValues) {
    return FailWith(fmt::format(
        "the {} sweeps of this run hold {} values together, more than the {} values a held "
        "report keeps in memory; write CSV without --plot (streamed, with no limit), or run "
        "the sweeps one at a time with knee sweep",
        design.sweeps.size(), held, kMaxHeldValues));
  }
  std::vector<AnalysisResult> results;
  if (design.bias_requested || hand_values) {
    results.push_back(AnalyzeBias(start->loaded, start->show, options));
    if (results.back().outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
  }
  for (const std::vector<SweepAxis>& axes : design.sweeps) {
    results.push_back(AnalyzeSweep(start->loaded, axes, start->show, options));
    if (results.back().outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
  }
  return Emit(results, options);
}

// The report to --out (replaced whole or not at all) or standard output; CSV in pieces
// as it is formatted, the other formats whole.
std::string WriteSpreadOut(const SpreadReport& report, const AnalysisOptions& options) {
  if (options.format != ReportFormat::kCsv) {
    const std::string text = WriteSpread(report, options.format);
    return options.out_path.empty() ? WriteStdout(text)
                                    : WriteFileAtomically(options.out_path, text);
  }
  if (options.out_path.empty()) {
    return WriteSpreadCsv(report, [](std::string_view piece) { return WriteStdout(piece); });
  }
  OutputStream out;
  std::string problem = out.Open(options.out_path);
  if (problem.empty()) {
    problem = WriteSpreadCsv(report, [&out](std::string_view piece) { return out.Write(piece); });
  }
  if (problem.empty()) problem = out.Commit();
  return problem;
}

int RunSpread(const std::string& file, AnalysisOptions options) {
  std::optional<Start> start;
  if (std::optional<int> status = StartAnalysis(file, &options, &start)) return *status;
  std::vector<std::vector<SweepAxis>> sweeps;
  if (!options.sweeps.empty()) {
    std::optional<std::vector<SweepAxis>> axes = ResolveCommandLineSweep(start->loaded, options);
    if (!axes) return static_cast<int>(ExitStatus::kBadInput);
    sweeps.push_back(std::move(*axes));
  } else {
    sweeps = start->loaded.design->sweeps;
  }
  SpreadOutcome spread = AnalyzeSpread(start->loaded, sweeps, start->show, options);
  for (const std::string& w : spread.warnings) fmt::print(stderr, "{}\n", w);
  if (!spread.error.empty()) return FailWith(spread.error);
  if (!options.quiet) {
    for (const std::string& n : spread.notes) fmt::print(stderr, "knee: note: {}\n", n);
  }
  Outcome outcome = spread.outcome;
  if (!options.plot_path.empty()) {
    std::string problem =
        WriteFileAtomically(options.plot_path, DrawSpreadHistograms(spread.report));
    if (!problem.empty()) {
      fmt::print(stderr, "knee: error: --plot: {}\n", problem);
      outcome.bad_input = true;
    }
  }
  std::string problem = WriteSpreadOut(spread.report, options);
  if (!problem.empty()) {
    fmt::print(stderr, "knee: error: {}\n", problem);
    outcome.bad_input = true;
  }
  if (!options.quiet) {
    const SpreadReport& r = spread.report;
    for (size_t i = 0; i < r.failures.size(); ++i) {
      if (r.failures[i].empty()) continue;
      constexpr std::string_view kStatus = "no solution: ";
      const std::string_view why = std::string_view(r.failures[i]).starts_with(kStatus)
                                       ? std::string_view(r.failures[i]).substr(kStatus.size())
                                       : std::string_view(r.failures[i]);
      fmt::print(stderr, "knee: no solution at {} {}: {}\n", r.corners ? "corner" : "sample",
                 r.first + static_cast<long long>(i), why);
    }
    for (const SpreadCheck& c : r.checks) {
      if (c.pass) continue;
      fmt::print(stderr, "knee: yield missed: {} {}: {} of {} samples pass\n",
                 c.rating ? "rating" : "expect", c.name, c.passing, c.samples);
    }
  }
  return static_cast<int>(outcome.Status());
}

}  // namespace knee::cli
