// knee hand: the exact bias point and the simplified models of hand calculation (ideal,
// constant drop, piecewise linear), side by side (docs/hand-models.md).
#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <limits>

#include "analyses.h"
#include "commands.h"
#include "eng_format.h"
#include "knee/diode_law.h"
#include "knee/hand.h"
#include "output.h"
#include "report_hand.h"
#include "stress.h"

namespace knee::cli {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Parses --drop, --on-res and --fit-at with the netlist's number forms; "" or a message.
std::string ReadSettings(const AnalysisOptions& options, HandSettings* s) {
  auto read = [](const std::string& option, const std::string& text, std::string_view unit,
                 std::string_view what, double* out) -> std::string {
    SourceLocation where;
    where.file = option;
    Result<double> v = ParseNumberText(text, unit, what, where);
    if (!v) return fmt::format("{} {}: {}", option, text, v.errors().front().message);
    *out = *v;
    return "";
  };
  double value = 0;
  if (!options.hand_drop.empty()) {
    std::string problem = read("--drop", options.hand_drop, "V", "a diode drop", &s->drop);
    if (!problem.empty()) return problem;
    if (!(s->drop >= 0) || s->drop > 100) {
      return fmt::format("--drop {}: expected a voltage in [0, 100] V", options.hand_drop);
    }
  }
  if (!options.hand_on_res.empty()) {
    std::string problem = read("--on-res", options.hand_on_res, "Ohm", "an on-resistance", &value);
    if (!problem.empty()) return problem;
    if (!(value >= 0)) return fmt::format("--on-res {}: expected ohms >= 0", options.hand_on_res);
    s->on_res = value;
  }
  if (!options.hand_fit_at.empty()) {
    std::string problem = read("--fit-at", options.hand_fit_at, "A", "a fit current", &value);
    if (!problem.empty()) return problem;
    if (!(value > 0)) {
      return fmt::format("--fit-at {}: expected a forward current > 0 A", options.hand_fit_at);
    }
    s->fit_at = value;
  }
  if (s->on_res && s->fit_at) {
    return "--on-res and --fit-at both set the piecewise-linear model; give one of them";
  }
  return "";
}

// How the report describes the piecewise-linear model of MakePiecewiseModel(settings).
std::string PiecewiseDescription(const HandSettings& s) {
  if (s.fit_at) return fmt::format("tangent to each part's curve at {}", FormatEng(*s.fit_at, "A"));
  if (s.on_res) {
    return fmt::format("{} plus {} on, open off", FormatEng(s.drop, "V"),
                       FormatEng(*s.on_res, "Ohm"));
  }
  return fmt::format("{} plus each part's series_res on, open off", FormatEng(s.drop, "V"));
}

}  // namespace

int RunHand(const std::string& file, AnalysisOptions options) {
  if (!options.shard.empty()) {
    return FailWith("--shard: knee hand computes one bias point, not a sweep");
  }
  std::string problem = PrepareOptions(&options);
  if (!problem.empty()) return FailWith(problem);
  HandSettings settings;
  problem = ReadSettings(options, &settings);
  if (!problem.empty()) return FailWith(problem);
  std::optional<LoadedDesign> loaded = LoadDesign(file, options);
  if (!loaded) return static_cast<int>(ExitStatus::kBadInput);
  const Circuit& circuit = loaded->design->circuit;

  Result<std::vector<HandModel>> hand_models = MakeHandModels(circuit, settings);
  if (!hand_models) {
    PrintDiagnostics(hand_models.errors(), loaded->source);
    return static_cast<int>(ExitStatus::kBadInput);
  }

  // The exact bias point.
  Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit, options.solver);
  if (!solver) {
    PrintDiagnostics(solver.errors(), loaded->source);
    return static_cast<int>(ExitStatus::kBadInput);
  }
  (*solver)->set_single_point(true);
  Solution exact;
  const SolveSummary summary = (*solver)->Solve(&exact);
  const bool exact_ok = summary.status == SolveStatus::kConverged;

  Outcome outcome;
  HandReport report;
  report.title = circuit.title;
  report.file = loaded->file;
  report.temp = circuit.temp;
  report.account = BiasPointAccount(summary, options.solver);
  if (!exact_ok) {
    report.exact_failure = fmt::format("{}: {}", ToString(summary.status), summary.detail);
    outcome.point_failed = true;
  }

  std::vector<DiodeState> exact_states(circuit.elements.size(), DiodeState::kOff);
  if (exact_ok) {
    exact_states = ExactStates(circuit, exact);
    std::string caution = HighVoltageCaution(LargestVoltage(circuit, exact));
    if (!caution.empty()) report.cautions.push_back(caution);
  }

  HandModelColumn exact_column;
  exact_column.name = "exact";
  exact_column.description = "the diode law of docs/model.md, solved by Newton-Raphson";
  exact_column.has_answer = exact_ok;
  report.models.push_back(exact_column);

  std::vector<HandModel> models = std::move(hand_models).value();
  models.back().description = PiecewiseDescription(settings);
  HandSearchOptions search;
  if (exact_ok) search.start = exact_states;
  std::vector<const Solution*> answers{exact_ok ? &exact : nullptr};
  std::vector<const std::vector<DiodeState>*> states{&exact_states};
  std::vector<HandResult> results;
  results.reserve(models.size());
  for (const HandModel& model : models) {
    results.push_back(SolveHand(circuit, model, search));
    const HandResult& r = results.back();
    HandModelColumn c;
    c.name = ToString(model.kind);
    c.description = model.kind == HandModelKind::kConstantDrop
                        ? fmt::format("{} on, open off", FormatEng(settings.drop, "V"))
                        : model.description;
    c.has_answer = HasAnswer(r.status);
    c.search_status = ToString(r.status);
    c.exhaustive = r.exhaustive;
    c.sets_tried = r.sets_tried;
    c.singular_sets = r.singular_sets;
    c.consistent_sets = r.consistent_sets;
    c.detail = r.detail;
    if (!c.has_answer) outcome.point_failed = true;
    c.states_match = c.has_answer && exact_ok;
    if (c.has_answer) {
      for (size_t e = 0; e < circuit.elements.size(); ++e) {
        if (circuit.elements[e].kind == ElementKind::kDiode &&
            r.solutions.front().states[e] != exact_states[e]) {
          c.states_match = false;
        }
      }
    }
    report.models.push_back(c);
    answers.push_back(c.has_answer ? &r.solutions.front().solution : nullptr);
    states.push_back(c.has_answer ? &r.solutions.front().states : nullptr);
  }

  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    if (circuit.elements[e].kind != ElementKind::kDiode) continue;
    HandDiodeRow row;
    row.name = circuit.elements[e].name;
    for (size_t m = 0; m < answers.size(); ++m) {
      row.state.push_back(answers[m] ? ToString((*states[m])[e]) : "");
      row.v.push_back(answers[m] ? answers[m]->element_voltage[e] : kNaN);
      row.i.push_back(answers[m] ? answers[m]->element_current[e] : kNaN);
    }
    row.rd = exact_ok ? JunctionResistance(circuit, static_cast<int>(e), exact) : kNaN;
    report.diodes.push_back(std::move(row));
  }
  for (size_t n = 1; n < circuit.nodes.size(); ++n) {
    HandNodeRow row;
    row.name = circuit.nodes[n];
    for (const Solution* s : answers) row.v.push_back(s ? s->node_voltage[n] : kNaN);
    report.nodes.push_back(std::move(row));
  }
  for (const Expectation& e : loaded->design->expects) {
    if (e.is_bound()) continue;  // hand models are compared on expected values only
    HandExpectation x;
    if (exact_ok) {
      x.check = CheckExpectation(e, exact);
      if (!x.check.met) outcome.expect_missed = true;
    } else {
      x.check.quantity = e.quantity.text();
      x.check.unit = e.quantity.unit();
      x.check.expected = e.expected;
      x.check.actual = kNaN;
      x.check.tolerance = e.tolerance;
      x.check.relative = e.relative;
      x.check.where = e.where;
    }
    for (const Solution* s : answers) x.models.push_back(s ? e.quantity.Evaluate(*s) : kNaN);
    report.expectations.push_back(std::move(x));
  }

  if (!options.plot_path.empty()) {
    problem = WriteFileAtomically(options.plot_path, DrawHandChart(report));
    if (!problem.empty()) {
      fmt::print(stderr, "knee: error: --plot: {}\n", problem);
      outcome.bad_input = true;
    }
  }
  const std::string text = WriteHandReport(report, options.format);
  problem =
      options.out_path.empty() ? WriteStdout(text) : WriteFileAtomically(options.out_path, text);
  if (!problem.empty()) {
    fmt::print(stderr, "knee: error: {}\n", problem);
    outcome.bad_input = true;
  }
  if (!options.quiet) {
    if (!exact_ok) fmt::print(stderr, "knee: no exact solution: {}\n", report.exact_failure);
    for (size_t m = 1; m < report.models.size(); ++m) {
      const HandModelColumn& c = report.models[m];
      if (!c.has_answer) {
        fmt::print(stderr, "knee: {} model: no answer: {}\n", c.name, c.detail);
      }
    }
    for (const HandExpectation& x : report.expectations) {
      const ExpectationCheck& e = x.check;
      if (e.met || !exact_ok) continue;
      fmt::print(stderr, "knee: expectation missed: {} expected {}, exact {}\n", e.quantity,
                 FormatEng(e.expected, e.unit, 6), FormatEng(e.actual, e.unit, 6));
    }
  }
  return static_cast<int>(outcome.Status());
}

}  // namespace knee::cli
