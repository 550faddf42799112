#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <limits>
#include <string_view>

#include "analyses.h"
#include "bounds.h"
#include "knee/design_steps.h"
#include "stress.h"

namespace knee::cli {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

}  // namespace

ExpectationCheck CheckExpectation(const Expectation& e, const Solution& solution) {
  ExpectationCheck check;
  check.quantity = e.quantity.text();
  check.unit = e.quantity.unit();
  check.expected = e.expected;
  check.tolerance = e.tolerance;
  check.relative = e.relative;
  check.where = e.where;
  check.actual = e.quantity.Evaluate(solution);
  const double error = std::fabs(check.actual - check.expected);
  const double bound = e.relative ? e.tolerance * std::fabs(e.expected) : e.tolerance;
  check.met = std::isfinite(check.actual) && error <= bound;
  return check;
}

namespace {

void PrintTrace(const BiasSolver& solver) {
  for (const NewtonStepRecord& r : solver.trace()) {
    fmt::print(stderr, "trace: step {:4d} {:<14} max|F| {:.3e} A  max|dx| {:.3e}{}\n", r.step,
               r.phase, r.max_residual, r.max_update, r.limited ? "  (limited)" : "");
  }
}

}  // namespace

const char* SolverMethodName(const SolverOptions& options) {
  return SolverMethodName(options.method, options.junction_limiting);
}

const char* SolverMethodName(SolverMethod method, bool junction_limiting) {
  switch (method) {
    case SolverMethod::kAuto:
      return "Newton-Raphson (potential method when the network is monotone)";
    case SolverMethod::kPotential:
      return "Newton-Raphson with a line search on the potential";
    case SolverMethod::kClassic:
      return junction_limiting ? "Newton-Raphson with junction limiting"
                               : "Newton-Raphson without junction limiting";
  }
  return "Newton-Raphson";
}

SolverAccount AccountOf(const SweepStats& stats, const SolverOptions& options) {
  SolverAccount account;
  account.points = stats.points;
  account.newton_steps = stats.newton_steps;
  account.max_newton_steps = stats.max_newton_steps;
  account.aids = stats.aids;
  account.method = SolverMethodName(options);
  if (!stats.methods.empty()) {
    std::string methods;
    for (SolverMethod m : stats.methods) {
      methods += (methods.empty() ? "" : "; ") +
                 std::string(SolverMethodName(m, options.junction_limiting));
    }
    account.method = methods;
  }
  account.unique = stats.unique && stats.points > stats.failed;
  account.max_kcl_residual = stats.max_kcl_residual;
  account.worst_node = stats.worst_node;
  account.undetermined_nodes = stats.undetermined_nodes;
  account.current_tol = options.abs_current_tol;
  account.heated = stats.heated;
  if (stats.heated) account.method += ", junction temperatures by Newton on the thermal balance";
  account.max_thermal_residual = stats.max_thermal_residual;
  account.thermal_worst = stats.thermal_worst;
  return account;
}

SolverAccount BiasPointAccount(const SolveSummary& summary, const SolverOptions& options) {
  SweepStats stats;
  AddSolveToStats(summary, &stats);
  if (summary.status != SolveStatus::kConverged) stats.failed = 1;
  SolverAccount account = AccountOf(stats, options);
  if (std::isfinite(summary.other_balance_temp)) {
    account.thermal_notes.push_back(fmt::format(
        "{} has another thermal balance near Tj = {:.3g} C: the solution shown is the one "
        "reached from the ambient; above that temperature the dissipation outgrows the thermal "
        "path (docs/thermal.md, \"Several balances\")",
        summary.thermal_worst, summary.other_balance_temp));
  }
  return account;
}

Report StartReport(const LoadedDesign& loaded, const char* analysis) {
  Report report;
  report.title = loaded.design->circuit.title;
  report.file = loaded.file;
  report.analysis = analysis;
  report.temp = loaded.design->circuit.temp;
  return report;
}

AnalysisResult AnalyzeBias(const LoadedDesign& loaded, const std::vector<QuantityExpr>& show,
                           const AnalysisOptions& options) {
  AnalysisResult result;
  Report& report = result.report;
  report = StartReport(loaded, "bias");
  for (const QuantityExpr& q : show) report.columns.push_back({q.text(), q.unit()});
  const Circuit& circuit = loaded.design->circuit;
  const double derate = options.derate / 100;
  const std::vector<StressCheck> checks = CollectStressChecks(circuit, derate);
  StressRecorder stress(checks);
  stress.BeginWindow(0, 1);
  AddStressColumns(checks, circuit, &report);

  SolverOptions solver_options = options.solver;
  solver_options.seek_other_balance = true;  // one bias point can afford the scan
  Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit, solver_options);
  if (!solver) {
    PrintDiagnostics(solver.errors(), loaded.source);
    result.outcome.bad_input = true;
    return result;
  }
  (*solver)->set_trace(options.trace);
  (*solver)->set_single_point(true);
  Solution solution;
  SolveSummary summary = (*solver)->Solve(&solution);
  if (options.trace) PrintTrace(**solver);
  solver->reset();  // what follows reads the solution and the circuit only

  report.account = BiasPointAccount(summary, options.solver);

  std::vector<double> row(report.columns.size(), kNaN);
  if (summary.status == SolveStatus::kConverged) {
    for (size_t i = 0; i < show.size(); ++i) row[i] = show[i].Evaluate(solution);
    FillStressColumns(checks, solution, row.data() + show.size());
    stress.Record(0, solution);
    std::string caution = HighVoltageCaution(LargestVoltage(circuit, solution));
    if (!caution.empty()) report.cautions.push_back(caution);
    for (const Expectation& e : loaded.design->expects) {
      if (e.is_bound()) continue;
      report.expectations.push_back(CheckExpectation(e, solution));
      if (!report.expectations.back().met) result.outcome.expect_missed = true;
    }
    BoundRecorder bounds(loaded.design->expects, 1);
    bounds.Record(0, solution);
    if (!bounds.Finish([](long long) { return std::string(); }, &report)) {
      result.outcome.expect_missed = true;
    }
  } else {
    std::string why = DescribeFailure(summary);
    if (!summary.unsettled.empty()) {
      why += fmt::format("; still moving: {}", fmt::join(summary.unsettled, ", "));
    }
    report.failures.push_back({0, "", why});
    result.outcome.point_failed = true;
  }
  report.rows.push_back(std::move(row));
  stress.EndWindow(&report.row_over_rating);
  stress.Finish(
      circuit, derate, [](long long) { return std::string(); }, &report);
  for (const StressLine& line : report.stress) result.outcome.stress_failed |= line.exceeded;
  return result;
}

}  // namespace knee::cli
