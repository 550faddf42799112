// knee sensitivity: the analysis, its three report formats and its chart.
#include "sensitivity.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <nlohmann/json.hpp>

#include "analyses.h"
#include "commands.h"
#include "eng_format.h"
#include "output.h"
#include "report_common.h"
#include "svg_chart.h"

namespace knee::cli {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// The quantities of --of, else those of the file's show list (ResolveShow).
std::optional<std::vector<QuantityExpr>> QuantitiesOf(const LoadedDesign& loaded,
                                                      const AnalysisOptions& options) {
  if (options.sensitivity_of.empty()) return ResolveShow(loaded, options);
  std::vector<QuantityExpr> of;
  std::vector<Diagnostic> errors;
  for (const std::string& text : SplitTopLevel(options.sensitivity_of, ',')) {
    Result<QuantityExpr> q =
        ParseQuantity(text, loaded.design->circuit, SourceLocation{"--of", 0, 0, 1});
    if (q) {
      of.push_back(std::move(q).value());
    } else {
      for (const Diagnostic& d : q.errors()) errors.push_back(d);
    }
  }
  if (!errors.empty()) {
    PrintDiagnostics(errors, "");
    return std::nullopt;
  }
  return of;
}

// "V/Ohm", "A/V", "V/C"; the quantity's unit alone for a dimensionless target.
std::string DerivativeUnit(const std::string& q, const std::string& target) {
  if (target.empty()) return DisplayUnit(q);
  return fmt::format("{}/{}", q.empty() ? "1" : DisplayUnit(q), DisplayUnit(target));
}

std::string Signed(double v) { return std::isfinite(v) ? fmt::format("{:+.4g}", v) : "n/a"; }

}  // namespace

std::vector<NamedTarget> NamedTargets(const Design& design) {
  std::vector<NamedTarget> out;
  const Circuit& c = design.circuit;
  for (const SensitivityTarget& t : SensitivityTargets(c)) {
    NamedTarget n;
    n.name = TargetName(c, t);
    n.unit = TargetUnit(c, t);
    n.value = TargetValue(c, t);
    n.target = t;
    out.push_back(std::move(n));
  }
  for (size_t p = 0; p < design.param_info.size(); ++p) {
    const ParamInfo& info = design.param_info[p];
    if (info.reach.empty()) continue;
    NamedTarget n;
    n.name = info.name;
    n.value = info.value;
    n.is_param = true;
    n.param = static_cast<int>(p);
    out.push_back(std::move(n));
  }
  return out;
}

double DerivativeOf(const NamedTarget& t, const Design& design, const CircuitGradient& gradient) {
  if (!t.is_param) return gradient.At(t.target);
  // The chain rule through every number the param reaches.
  double sum = 0.0;
  for (const ParamReach& r : design.param_info[static_cast<size_t>(t.param)].reach) {
    sum += r.slope * gradient.At(r.target);
  }
  return sum;
}

std::vector<WeightedQuantity> WeightsOf(const QuantityExpr& q, const Solution& solution) {
  const std::vector<double> partials = q.Partials(solution);
  std::vector<WeightedQuantity> weights;
  for (size_t k = 0; k < q.refs().size(); ++k) weights.push_back({q.refs()[k], partials[k]});
  return weights;
}

void RankLines(std::vector<SensitivityLine>* lines) {
  std::stable_sort(lines->begin(), lines->end(),
                   [](const SensitivityLine& a, const SensitivityLine& b) {
                     const bool fa = std::isfinite(a.normalized), fb = std::isfinite(b.normalized);
                     if (fa != fb) return fa;
                     return fa && std::fabs(a.normalized) > std::fabs(b.normalized);
                   });
}

SensitivityResult AnalyzeSensitivity(const LoadedDesign& loaded,
                                     const std::vector<QuantityExpr>& of,
                                     const AnalysisOptions& options,
                                     std::span<const SpreadEntry> spreads) {
  SensitivityResult result;
  SensitivityReport& report = result.report;
  const Design& design = *loaded.design;
  const Circuit& circuit = design.circuit;
  report.title = circuit.title;
  report.file = loaded.file;
  report.temp = circuit.temp;
  report.has_budget = !spreads.empty();
  Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit, options.solver);
  if (!solver) {
    PrintDiagnostics(solver.errors(), loaded.source);
    result.outcome.bad_input = true;
    return result;
  }
  Solution solution;
  const SolveSummary summary = (*solver)->Solve(&solution);
  report.account = BiasPointAccount(summary, options.solver);
  if (summary.status != SolveStatus::kConverged) {
    report.failures.push_back(
        {0, "", fmt::format("{}: {}", ToString(summary.status), summary.detail)});
    result.outcome.point_failed = true;
    return result;
  }
  const std::vector<NamedTarget> targets = NamedTargets(design);
  CircuitGradient gradient;
  for (const QuantityExpr& q : of) {
    QuantitySensitivity qs;
    qs.quantity = q.text();
    qs.unit = q.unit();
    qs.value = q.Evaluate(solution);
    const std::vector<WeightedQuantity> weights = WeightsOf(q, solution);
    Status done = (*solver)->Sensitivity(weights, &gradient);
    if (!done.ok()) {
      report.failures.push_back({0, qs.quantity, done.errors().front().message});
      result.outcome.point_failed = true;
      continue;
    }
    for (const NamedTarget& t : targets) {
      SensitivityLine line;
      line.target = t.name;
      line.unit = t.unit;
      line.value = t.value;
      line.derivative = DerivativeOf(t, design, gradient);
      line.normalized = qs.value != 0.0 ? t.value / qs.value * line.derivative : kNaN;
      qs.lines.push_back(std::move(line));
    }
    std::vector<SensitivityLine> ordered = qs.lines;  // target order, for the budget's lookups
    qs.budget = ComputeBudget(spreads, [&](const std::string& name) -> std::optional<double> {
      for (const SensitivityLine& l : ordered) {
        if (l.target == name) return l.derivative;
      }
      return std::nullopt;
    });
    RankLines(&qs.lines);
    report.quantities.push_back(std::move(qs));
  }
  return result;
}

std::string WriteSensitivityTable(const SensitivityReport& report) {
  const std::string file = report.file == "-" ? "<stdin>" : report.file;
  std::string out = fmt::format("{}: sensitivities at the bias point at {}\n",
                                report.title.empty() ? file : "\"" + report.title + "\"",
                                FormatEng(report.temp, "°C", 4));
  for (const QuantitySensitivity& q : report.quantities) {
    out += fmt::format("\n{} = {}\n", q.quantity, FormatEng(q.value, q.unit, 6));
    size_t width = std::string("target").size();
    for (const SensitivityLine& l : q.lines) width = std::max(width, DisplayWidth(l.target));
    out += fmt::format("  {}  {}  {}  {}\n", PadRight("target", width), PadLeft("value", 12),
                       PadLeft("derivative", 22), PadLeft("normalized", 11));
    for (const SensitivityLine& l : q.lines) {
      out += fmt::format(
          "  {}  {}  {}  {}\n", PadRight(l.target, width), PadLeft(FormatEng(l.value, l.unit), 12),
          PadLeft(fmt::format("{:.6g} {}", l.derivative, DerivativeUnit(q.unit, l.unit)), 22),
          PadLeft(Signed(l.normalized), 11));
    }
    if (report.has_budget) {
      out += "  tolerance budget (linear):\n";
      for (const Contribution& c : q.budget.contributions) {
        out += fmt::format("    {}  spread ±{:.4g}  contribution {}\n", PadRight(c.target, width),
                           c.spread, FormatEng(c.contribution, q.unit));
      }
      out += fmt::format("    worst case ±{}, root-sum-square ±{}\n",
                         FormatEng(q.budget.worst_case, q.unit), FormatEng(q.budget.rss, q.unit));
    }
  }
  for (const PointFailure& f : report.failures) {
    out += fmt::format("\nno result{}: {}\n", f.where.empty() ? "" : " for " + f.where, f.why);
  }
  const SolverAccount& a = report.account;
  out += fmt::format(
      "\nsolver: {}, {} Newton steps{}; adjoint method (one transposed solve per "
      "quantity)",
      a.method, a.newton_steps,
      a.aids.empty() ? "" : fmt::format(", aids: {}", fmt::join(a.aids, ", ")));
  if (report.failures.empty() || !report.quantities.empty()) {
    out += fmt::format("; largest KCL residual {:.2e} A{}", a.max_kcl_residual,
                       a.worst_node.empty() ? "" : " at " + a.worst_node);
  }
  out += "\n";
  return out;
}

std::string WriteSensitivityCsv(const SensitivityReport& report) {
  std::string out = "quantity,target,value,derivative,normalized\n";
  for (const QuantitySensitivity& q : report.quantities) {
    for (const SensitivityLine& l : q.lines) {
      out += fmt::format("{},{},{},{},{}\n", CsvField(q.quantity), CsvField(l.target),
                         FormatRoundTrip(l.value), FormatRoundTrip(l.derivative),
                         FormatRoundTrip(l.normalized));
    }
  }
  return out;
}

std::string WriteSensitivityJson(const SensitivityReport& report) {
  nlohmann::ordered_json j;
  j["format"] = "knee-sensitivity/1";
  j["title"] = report.title;
  j["file"] = report.file;
  j["analysis"] = "sensitivity";
  j["temp_c"] = report.temp;
  nlohmann::ordered_json quantities = nlohmann::ordered_json::array();
  for (const QuantitySensitivity& q : report.quantities) {
    nlohmann::ordered_json lines = nlohmann::ordered_json::array();
    for (const SensitivityLine& l : q.lines) {
      lines.push_back({{"target", l.target},
                       {"unit", l.unit},
                       {"value", JsonNumber(l.value)},
                       {"derivative", JsonNumber(l.derivative)},
                       {"normalized", JsonNumber(l.normalized)}});
    }
    nlohmann::ordered_json budget = nullptr;
    if (report.has_budget) {
      nlohmann::ordered_json contributions = nlohmann::ordered_json::array();
      for (const Contribution& c : q.budget.contributions) {
        contributions.push_back({{"target", c.target},
                                 {"spread", JsonNumber(c.spread)},
                                 {"derivative", JsonNumber(c.derivative)},
                                 {"contribution", JsonNumber(c.contribution)}});
      }
      budget = {{"contributions", contributions},
                {"worst_case", JsonNumber(q.budget.worst_case)},
                {"rss", JsonNumber(q.budget.rss)}};
    }
    quantities.push_back({{"quantity", q.quantity},
                          {"unit", q.unit},
                          {"value", JsonNumber(q.value)},
                          {"sensitivities", lines},
                          {"budget", budget}});
  }
  j["quantities"] = quantities;
  nlohmann::ordered_json failures = nlohmann::ordered_json::array();
  for (const PointFailure& f : report.failures) {
    failures.push_back({{"quantity", f.where}, {"why", f.why}});
  }
  j["failures"] = failures;
  j["solver"] = JsonSolverAccount(report.account);
  return j.dump(2) + "\n";
}

std::string WriteSensitivityReport(const SensitivityReport& report, ReportFormat format) {
  switch (format) {
    case ReportFormat::kCsv:
      return WriteSensitivityCsv(report);
    case ReportFormat::kJson:
      return WriteSensitivityJson(report);
    case ReportFormat::kTable:
      break;
  }
  return WriteSensitivityTable(report);
}

std::string DrawSensitivityChart(const SensitivityReport& report) {
  // One panel per quantity: a horizontal bar per target (at most kBars, the largest),
  // right of the axis for positive, left for negative normalized sensitivities.
  constexpr size_t kBars = 20;
  constexpr int kWidth = 960, kLabel = 220, kBarHeight = 18, kTitle = 30, kGap = 20;
  const int plot_left = kLabel + 10, plot_right = kWidth - 70;
  int height = kGap;
  for (const QuantitySensitivity& q : report.quantities) {
    height += kTitle + static_cast<int>(std::min(q.lines.size(), kBars)) * kBarHeight + kGap;
  }
  std::string svg = fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{}\" height=\"{}\" "
      "font-family=\"sans-serif\" font-size=\"12\">\n<rect width=\"100%\" height=\"100%\" "
      "fill=\"white\"/>\n",
      kWidth, height);
  int y = kGap;
  for (const QuantitySensitivity& q : report.quantities) {
    const size_t bars = std::min(q.lines.size(), kBars);
    double largest = 0.0;
    for (size_t k = 0; k < bars; ++k) {
      if (std::isfinite(q.lines[k].normalized)) {
        largest = std::max(largest, std::fabs(q.lines[k].normalized));
      }
    }
    const std::vector<double> ticks = LinearTicks(-largest, largest, 6);
    const double span =
        largest > 0.0 ? std::max(largest, ticks.empty() ? largest : ticks.back()) : 1.0;
    const double mid = 0.5 * (plot_left + plot_right), half = 0.5 * (plot_right - plot_left);
    svg += fmt::format(
        "<text x=\"{}\" y=\"{}\" font-weight=\"bold\">{} = {}: normalized "
        "sensitivity (x/Q)·dQ/dx</text>\n",
        10, y + 18, XmlEscape(q.quantity), XmlEscape(FormatEng(q.value, q.unit)));
    y += kTitle;
    const int top = y, bottom = y + static_cast<int>(bars) * kBarHeight;
    for (double t : ticks) {
      const double x = mid + t / span * half;
      svg += fmt::format(
          "<line x1=\"{:.1f}\" y1=\"{}\" x2=\"{:.1f}\" y2=\"{}\" stroke=\"#ddd\"/>\n"
          "<text x=\"{:.1f}\" y=\"{}\" text-anchor=\"middle\" fill=\"#555\">{:g}"
          "</text>\n",
          x, top, x, bottom, x, bottom + 14, t);
    }
    for (size_t k = 0; k < bars; ++k) {
      const SensitivityLine& l = q.lines[k];
      const double v = std::isfinite(l.normalized) ? l.normalized : 0.0;
      const double x0 = mid, x1 = mid + v / span * half;
      const int by = top + static_cast<int>(k) * kBarHeight;
      svg += fmt::format(
          "<text x=\"{}\" y=\"{}\" text-anchor=\"end\">{}</text>\n"
          "<rect x=\"{:.1f}\" y=\"{}\" width=\"{:.1f}\" height=\"{}\" fill=\"{}\"/>\n",
          kLabel, by + 13, XmlEscape(l.target), std::min(x0, x1), by + 3, std::fabs(x1 - x0),
          kBarHeight - 6, v >= 0.0 ? "#2b6cb0" : "#c05621");
    }
    svg += fmt::format("<line x1=\"{:.1f}\" y1=\"{}\" x2=\"{:.1f}\" y2=\"{}\" stroke=\"#333\"/>\n",
                       mid, top, mid, bottom);
    y = bottom + kGap;
  }
  svg += "</svg>\n";
  return svg;
}

std::optional<SweepSensitivity> PrepareSweepSensitivity(const Design& design,
                                                        const std::vector<SweepAxis>& axes,
                                                        const std::string& text) {
  Result<QuantityExpr> q =
      ParseQuantity(text, design.circuit, SourceLocation{"--sensitivity", 0, 0, 1});
  if (!q) {
    PrintDiagnostics(q.errors(), "");
    return std::nullopt;
  }
  const bool param_axis = std::any_of(axes.begin(), axes.end(), [](const SweepAxis& a) {
    return a.target.kind == SweepTarget::Kind::kParam;
  });
  SweepSensitivity s{std::move(*q), {}, {}};
  for (NamedTarget& t : NamedTargets(design)) {
    if (t.is_param && param_axis) continue;
    s.columns.push_back(
        {fmt::format("d({})/d({})", s.quantity.text(), t.name),
         t.unit.empty()
             ? s.quantity.unit()
             : fmt::format("{}/{}", s.quantity.unit().empty() ? "1" : s.quantity.unit(), t.unit)});
    s.targets.push_back(std::move(t));
  }
  return s;
}

void FillSweepSensitivity(const SweepSensitivity& s, const Design& design, BiasSolver& solver,
                          const Solution& solution, double* out) {
  thread_local CircuitGradient gradient;
  const std::vector<WeightedQuantity> weights = WeightsOf(s.quantity, solution);
  const bool ok = solver.Sensitivity(weights, &gradient).ok();
  for (size_t k = 0; k < s.targets.size(); ++k) {
    out[k] = ok ? DerivativeOf(s.targets[k], design, gradient) : kNaN;
  }
}

// The tolerance budget's entries from the file's vary lines (docs/sensitivity.md,
// "Tolerance budget"): a shared line's half-width in the target's unit, the larger side of
// a factor spread (nominal * (F - 1)). A per-device (`each`) line is left out: its draws
// are independent per diode, which one part-level derivative cannot weigh.
namespace {
std::vector<SpreadEntry> BudgetSpreads(const std::vector<VaryLine>& varies) {
  std::vector<SpreadEntry> spreads;
  for (const VaryLine& v : varies) {
    if (v.each) continue;
    const double half = v.form == VaryLine::Form::kFactor
                            ? std::fabs(v.nominal) * (v.factor - 1)
                            : std::max(v.high - v.nominal, v.nominal - v.low);
    spreads.push_back({v.target.name, half});
  }
  return spreads;
}
}  // namespace

int RunSensitivity(const std::string& file, AnalysisOptions options) {
  std::string problem = PrepareOptions(&options);
  if (!problem.empty()) return FailWith(problem);
  std::optional<LoadedDesign> loaded = LoadDesign(file, options);
  if (!loaded) return static_cast<int>(ExitStatus::kBadInput);
  std::optional<std::vector<QuantityExpr>> of = QuantitiesOf(*loaded, options);
  if (!of) return static_cast<int>(ExitStatus::kBadInput);
  const std::vector<SpreadEntry> spreads = BudgetSpreads(loaded->design->varies);
  SensitivityResult result = AnalyzeSensitivity(*loaded, *of, options, spreads);
  if (result.outcome.bad_input) return static_cast<int>(ExitStatus::kBadInput);
  if (!options.plot_path.empty()) {
    problem = WriteFileAtomically(options.plot_path, DrawSensitivityChart(result.report));
    if (!problem.empty()) {
      fmt::print(stderr, "knee: error: --plot: {}\n", problem);
      result.outcome.bad_input = true;
    }
  }
  const std::string text = WriteSensitivityReport(result.report, options.format);
  problem =
      options.out_path.empty() ? WriteStdout(text) : WriteFileAtomically(options.out_path, text);
  if (!problem.empty()) {
    fmt::print(stderr, "knee: error: {}\n", problem);
    result.outcome.bad_input = true;
  }
  if (!options.quiet) {
    for (const PointFailure& f : result.report.failures) {
      fmt::print(stderr, "knee: no solution{}: {}\n", f.where.empty() ? "" : " for " + f.where,
                 f.why);
    }
  }
  return static_cast<int>(result.outcome.Status());
}

}  // namespace knee::cli
