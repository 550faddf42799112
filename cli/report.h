// What an analysis hands to the report writers: a table of numbers with named columns,
// and the solver's account. The writers (table, csv, json) know nothing of circuits.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "knee/result.h"

namespace knee::cli {

enum class ReportFormat { kTable, kCsv, kJson };

struct Column {
  std::string name;  // quantity as written: "pin.v", "(pin.v - vdd.v)", "Vline"
  std::string unit;  // "V", "A", "W", "Ohm", "C", "" (dimensionless or mixed)
};

// One point of an analysis that found no solution: which point and why.
struct PointFailure {
  long long row = 0;  // index into Report::rows
  std::string where;  // "Vline = 3.1 V, temp = 85 C" (empty for a bias point)
  std::string why;
};

struct ExpectationCheck {
  std::string quantity;
  std::string unit;
  double expected = 0;
  double actual = 0;
  double tolerance = 0;  // absolute (in unit) or relative fraction
  bool relative = true;
  bool met = false;
  SourceLocation where;  // line 0 when given on the command line
  // Bounds (expect Q <= VALUE, >= VALUE), checked at every point: `expected` is the bound
  // (NaN when it reads quantities: `bound_text`), `actual` the worst value, the one with
  // the least margin (most beyond the bound when it is broken).
  std::string relation = "=";   // "=", "<=" or ">="
  std::string bound_text;       // the bound as written when it is not a constant
  long long points = 0;         // points checked (solved points)
  long long failed_points = 0;  // points where the bound is broken
  std::string first_where;      // the first such point ("" for a bias point)
  double first_actual = 0;      // the value there
  std::string worst_where;      // where the worst value occurs
  double worst_limit = 0;       // the bound's value there
};

// The worst use of one rating of one diode or resistor across an analysis; or, unrated,
// the largest reverse (breakdown) current of a rated breakdown diode.
struct StressLine {
  std::string diode;         // the element's name (a diode or a resistor)
  std::string element_kind;  // "diode" or "resistor"
  std::string key;           // "max_current", "max_reverse_v", "max_power"; "" when unrated
  std::string quantity;      // "forward current", "reverse voltage", "dissipation",
                             // "reverse current"
  std::string unit;          // "A", "V", "W"
  std::string direction;     // "anode to cathode", "cathode above anode", ... ("" for power)
  std::string never;         // "never forward-biased" when the value never goes that way
  bool rated = true;         // false: reported only (reverse current), never exceeded
  double worst = 0;          // largest value across the analysis (signed)
  long long row = -1;        // row where it occurs (first such row)
  std::string where;         // the sweep values of that row ("" for a bias point)
  double rating = 0;
  double limit = 0;        // rating * derate
  double use_percent = 0;  // 100 * worst / rating
  bool exceeded = false;   // worst > limit
};

struct SolverAccount {
  std::string method;             // which solver ran
  bool unique = false;            // the network is monotone: its solution is unique
  long long points = 0;           // solved points (1 for a bias point)
  long long newton_steps = 0;     // over all points
  int max_newton_steps = 0;       // at the hardest point
  std::vector<std::string> aids;  // every aid needed at any point, first use order
  double max_kcl_residual = 0;    // A, largest over all reported points
  std::string worst_node;
  // Nodes whose voltages a stray current of current_tol moves by more than
  // kUndeterminedVolts (SolveSummary::undetermined_nodes).
  std::vector<std::string> undetermined_nodes;
  double current_tol = 0;  // A, the solver's abs_current_tol
  // Self-heating (docs/thermal.md): some diode's junction temperature was solved; the
  // largest thermal balance residual (K) over the reported points and its diode.
  bool heated = false;
  double max_thermal_residual = 0;
  std::string thermal_worst;
  std::vector<std::string> thermal_notes;  // another thermal balance (docs/thermal.md)
};

struct Report {
  std::string title;        // circuit title (may be empty)
  std::string file;         // netlist file as given
  std::string analysis;     // "bias", "sweep", ...
  double temp = 25;         // degC of the circuit (for a temperature sweep: the base)
  bool temp_swept = false;  // a sweep axis is temp: the temperature is per row, not one
  int sweep_axes = 0;       // leading columns that are sweep variables (0 for bias)
  std::vector<Column> columns;
  std::vector<std::vector<double>> rows;  // NaN where a point failed
  std::vector<PointFailure> failures;
  SolverAccount account;
  std::vector<ExpectationCheck> expectations;
  std::vector<std::string> cautions;  // safety cautions shown with the report
  std::vector<StressLine> stress;     // empty when no diode has ratings
  double derate_percent = 100;        // --derate
  std::vector<char> row_over_rating;
  // Trailing columns that only CSV prints: the use of each rating in % per row
  // ("Dhi.i/max_current [%]"); the table and JSON show the stress section instead.
  int csv_only_columns = 0;  // per row: some rating exceeded there (charts)
  bool log_inner = false;    // the inner sweep axis is logarithmic (charts use a log x axis)
  bool csv_header = true;    // false for the 2nd..Nth shard of a sweep, so shards concatenate
};

// Columns every format shows (all but the CSV-only stress columns).
inline size_t SharedColumns(const Report& report) {
  return report.columns.size() - static_cast<size_t>(report.csv_only_columns);
}

std::string WriteTable(const Report& report);
std::string WriteCsv(const Report& report);
std::string WriteCsvHeader(const Report& report);  // the header row alone
std::string WriteCsvRows(const Report& report);    // the rows alone
std::string WriteJson(const Report& report);
std::string WriteReport(const Report& report, ReportFormat format);

}  // namespace knee::cli
