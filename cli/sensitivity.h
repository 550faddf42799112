// knee sensitivity (cli.md, "knee sensitivity"; docs/sensitivity.md): the derivative of
// each quantity with respect to every number of the circuit at the bias point, by the
// adjoint method, ranked by normalized sensitivity, with the linear tolerance budget of
// the varied targets; and the per-point sensitivity columns of knee sweep --sensitivity.
#pragma once

#include <span>
#include <string>
#include <vector>

#include "exit_status.h"
#include "knee/netlist.h"
#include "knee/sensitivity.h"
#include "options.h"
#include "pipeline.h"
#include "report.h"
#include "sensitivity_budget.h"

namespace knee::cli {

// One number of the circuit as a report names it: an engine target or a param.
struct NamedTarget {
  std::string name;  // "R1", "D1.area", "SIG.sat_current", "temp", or a param's name
  std::string unit;
  double value = 0.0;
  bool is_param = false;
  SensitivityTarget target;  // when !is_param
  int param = -1;            // index into Design::params when is_param
};
// Every engine target of the circuit, then every param that reaches some number of it.
std::vector<NamedTarget> NamedTargets(const Design& design);
// dQ/d target from Q's gradient (a param through every number it reaches).
double DerivativeOf(const NamedTarget& t, const Design& design, const CircuitGradient& gradient);

// The adjoint right-hand side of an expression at a solution: its partials on the plain
// quantities it reads.
std::vector<WeightedQuantity> WeightsOf(const QuantityExpr& q, const Solution& solution);

struct SensitivityLine {
  std::string target;
  std::string unit;
  double value = 0.0;       // the target's value
  double derivative = 0.0;  // dQ/d target, in Q's unit per target unit
  double normalized = 0.0;  // (value / Q) dQ/d target; NaN when Q is 0
};

struct QuantitySensitivity {
  std::string quantity;
  std::string unit;
  double value = 0.0;
  std::vector<SensitivityLine> lines;  // ranked by |normalized|, largest first
  Budget budget;                       // the vary lines' budget (empty without them)
};

struct SensitivityReport {
  std::string title, file;
  double temp = 25.0;
  std::vector<QuantitySensitivity> quantities;
  SolverAccount account;
  std::vector<PointFailure> failures;
  bool has_budget = false;  // some spread entries were given
};

// Ranks lines by |normalized| (largest first; NaN last, then by target order).
void RankLines(std::vector<SensitivityLine>* lines);

// The analysis: one bias solve and one adjoint solve per quantity. `spreads` are the
// varied targets' half-widths (from the file's vary lines; see docs/sensitivity.md).
struct SensitivityResult {
  SensitivityReport report;
  Outcome outcome;
};
SensitivityResult AnalyzeSensitivity(const LoadedDesign& loaded,
                                     const std::vector<QuantityExpr>& of,
                                     const AnalysisOptions& options,
                                     std::span<const SpreadEntry> spreads);

std::string WriteSensitivityTable(const SensitivityReport& report);
std::string WriteSensitivityCsv(const SensitivityReport& report);
std::string WriteSensitivityJson(const SensitivityReport& report);
std::string WriteSensitivityReport(const SensitivityReport& report, ReportFormat format);
// A bar chart of the normalized sensitivities, one panel per quantity (complete SVG).
std::string DrawSensitivityChart(const SensitivityReport& report);

// knee sweep --sensitivity Q: the quantity and one column per target.
struct SweepSensitivity {
  QuantityExpr quantity;
  std::vector<NamedTarget> targets;
  std::vector<Column> columns;  // "d(Q)/d(TARGET)", unit "V/Ohm", ...
};
// Parses Q (errors printed, nothing returned). Params are left out when an axis sweeps a
// param: their reach is differentiated at the file's values only.
std::optional<SweepSensitivity> PrepareSweepSensitivity(const Design& design,
                                                        const std::vector<SweepAxis>& axes,
                                                        const std::string& text);
// One point's derivatives into out[0 .. columns.size()) (NaN when the adjoint solve fails).
// Thread-safe for distinct solvers.
void FillSweepSensitivity(const SweepSensitivity& s, const Design& design, BiasSolver& solver,
                          const Solution& solution, double* out);

// knee sensitivity FILE [options].
int RunSensitivity(const std::string& file, AnalysisOptions options);

}  // namespace knee::cli
