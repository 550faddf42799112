#include "commands.h"

#include <fmt/format.h>

#include <algorithm>
#include <cstdio>
#include <nlohmann/json.hpp>
#include <string>
#include <string_view>

#include "analyses.h"
#include "eng_format.h"
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
  if (!options.quiet) {
    for (const AnalysisResult& r : results) {
      for (const PointFailure& f : r.report.failures) {
        // The reason may itself begin with the status ("no solution: no DC solution: ...").
        constexpr std::string_view kStatus = "no solution: ";
        const std::string_view why = std::string_view(f.why).starts_with(kStatus)
                                         ? std::string_view(f.why).substr(kStatus.size())
                                         : std::string_view(f.why);
        fmt::print(stderr, "knee: no solution{}: {}\n", f.where.empty() ? "" : " at " + f.where,
                   why);
      }
      for (const ExpectationCheck& e : r.report.expectations) {
        if (e.met) continue;
        if (e.relation != "=") {
          fmt::print(stderr, "knee: bound missed: {} {} {}: {} at {} of {} points, first{} ({})\n",
                     e.quantity, e.relation,
                     e.bound_text.empty() ? FormatEng(e.expected, e.unit, 6) : e.bound_text,
                     "broken", e.failed_points, e.points,
                     e.first_where.empty() ? " at the bias point" : " at " + e.first_where,
                     FormatEng(e.first_actual, e.unit, 6));
          continue;
        }
        fmt::print(stderr, "knee: expectation missed: {} expected {}, exact {}\n", e.quantity,
                   FormatEng(e.expected, e.unit, 6), FormatEng(e.actual, e.unit, 6));
      }
    }
  }
  return static_cast<int>(outcome.Status());
}

// Options, netlist and quantities to show: what every analysis command starts from.
struct Start {
  LoadedDesign loaded;
  std::vector<QuantityExpr> show;
};

// Returns the exit status when something is wrong (after saying what), else fills *start.
std::optional<int> StartAnalysis(const std::string& file, AnalysisOptions* options,
                                 std::optional<Start>* start) {
  std::string problem = PrepareOptions(options);
  if (!problem.empty()) return FailWith(problem);
  std::optional<LoadedDesign> loaded = LoadDesign(file, *options);
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
    long long points = 1;
    for (const SweepAxis& axis : sweep) points *= static_cast<long long>(axis.values.size());
    requests.push_back(fmt::format("sweep of {}", Count(points, "point", "points")));
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
  problem =
      options.out_path.empty() ? WriteStdout(text) : WriteFileAtomically(options.out_path, text);
  if (!problem.empty()) return FailWith(problem);
  return 0;
}

int RunBias(const std::string& file, AnalysisOptions options) {
  std::optional<Start> start;
  if (std::optional<int> status = StartAnalysis(file, &options, &start)) return *status;
  // A bias point needs the circuit, not the parsed statements nor the text: freeing them
  // first lowers the peak memory of a large netlist (the solve is its peak) by their size.
  // What is printed after this point quotes no line of the text: the solver's diagnostics
  // carry no source location (they name elements and nodes).
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
  std::vector<AnalysisResult> results;
  results.push_back(AnalyzeSweep(start->loaded, *axes, start->show, options));
  if (results.back().outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
  return Emit(results, options);
}

int RunRun(const std::string& file, AnalysisOptions options) {
  std::optional<Start> start;
  if (std::optional<int> status = StartAnalysis(file, &options, &start)) return *status;
  const Design& design = *start->loaded.design;
  std::vector<AnalysisResult> results;
  // An expected value is checked at the bias point; bounds alone do not ask for one (they
  // are checked at whatever points the file's analyses solve).
  const bool hand_values = std::any_of(design.expects.begin(), design.expects.end(),
                                       [](const Expectation& e) { return !e.is_bound(); });
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
  const std::string text = WriteSpread(spread.report, options.format);
  std::string problem =
      options.out_path.empty() ? WriteStdout(text) : WriteFileAtomically(options.out_path, text);
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
