// The people-facing layout: a header naming circuit, analysis and temperature, the
// numbers in engineering notation, then expectations, failures and the solver's account.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "eng_format.h"
#include "report.h"
#include "report_common.h"

namespace knee::cli {
namespace {

std::string Header(const Report& report) {
  const std::string file = report.file == "-" ? "<stdin>" : report.file;
  std::string name = report.title.empty() ? file : "\"" + report.title + "\"";
  std::string analysis = report.analysis == "bias" ? "bias point" : report.analysis;
  if (report.temp_swept) return fmt::format("{}: {}, temperature swept\n", name, analysis);
  return fmt::format("{}: {} at {}\n", name, analysis, FormatEng(report.temp, "°C", 4));
}

std::string Tolerance(const ExpectationCheck& e) {
  return e.relative ? fmt::format("{:g} %", e.tolerance * 100) : FormatEng(e.tolerance, e.unit);
}

// "met    expect D1.i <= 2 mA at 601 points: worst 1.93 mA at Vline = 24 V (margin 70 µA)"
std::string BoundLine(const ExpectationCheck& e) {
  const std::string bound = e.bound_text.empty() ? FormatEng(e.expected, e.unit) : e.bound_text;
  const std::string at = [&] {
    if (e.points == 1 && e.worst_where.empty()) return std::string("at the bias point");
    return fmt::format("at {} points", e.points);
  }();
  const std::string where = e.worst_where.empty() ? "" : " at " + e.worst_where;
  const std::string limit =
      e.bound_text.empty() ? "" : fmt::format(", bound {}", FormatEng(e.worst_limit, e.unit));
  const double margin = e.relation == "<=" ? e.worst_limit - e.actual : e.actual - e.worst_limit;
  std::string out =
      fmt::format("  {} expect {} {} {} {}: worst {}{}{} (margin {})\n",
                  e.met ? "met   " : "MISSED", e.quantity, e.relation, bound, at,
                  FormatEng(e.actual, e.unit), where, limit, FormatEng(margin, e.unit));
  if (!e.met) {
    out += fmt::format("         broken at {} of {} points, first {}({})\n", e.failed_points,
                       e.points, e.first_where.empty() ? "" : "at " + e.first_where + " ",
                       FormatEng(e.first_actual, e.unit));
  }
  return out;
}

std::string Expectations(const Report& report) {
  std::string out;
  for (const ExpectationCheck& e : report.expectations) {
    if (e.relation != "=") {
      out += BoundLine(e);
      continue;
    }
    const double error = e.actual - e.expected;
    std::string rel = e.expected != 0 ? fmt::format(" ({:+.3g} %)", 100 * error / e.expected) : "";
    out += fmt::format("  {} expect {} = {} within {}: exact {}, error {}{}\n",
                       e.met ? "met   " : "MISSED", e.quantity, FormatEng(e.expected, e.unit),
                       Tolerance(e), FormatEng(e.actual, e.unit), FormatEng(error, e.unit), rel);
  }
  return out;
}

std::string Account(const Report& report) {
  const SolverAccount& a = report.account;
  std::string aids =
      a.aids.empty() ? "no aids" : "aids: " + fmt::format("{}", fmt::join(a.aids, ", "));
  std::string steps;
  if (a.points <= 1) {
    steps = fmt::format("{} Newton steps", a.newton_steps);
  } else {
    steps = fmt::format(
        "{} points, {} Newton steps ({:.2f} per point, at most {})", a.points, a.newton_steps,
        static_cast<double>(a.newton_steps) / static_cast<double>(a.points), a.max_newton_steps);
  }
  // Every point failed: there is no solution whose residual could be reported.
  const bool none_solved = !report.rows.empty() && report.failures.size() >= report.rows.size();
  std::string residual = none_solved
                             ? std::string("no solution to check")
                             : fmt::format("largest KCL residual {:.2e} A", a.max_kcl_residual);
  if (!none_solved && !a.worst_node.empty()) residual += " at " + a.worst_node;
  if (!none_solved && a.heated) {
    residual += fmt::format("; largest thermal balance residual {:.2e} K at {}",
                            a.max_thermal_residual, a.thermal_worst);
  }
  const char* unique = a.unique ? " (monotone network: the solution is unique)" : "";
  std::string out =
      fmt::format("solver: {}{}, {}, {}; {}\n", a.method, unique, steps, aids, residual);
  out += UndeterminedNote(a);
  for (const std::string& note : a.thermal_notes) out += "note: " + note + "\n";
  return out;
}

// What a table may show as 0: values zero to the solution's accuracy. A current below the
// largest KCL residual of the report; a voltage within the round-off of the largest
// voltage of the report (kRoundOffUlps units in its last place; sweep values included); a
// power below both resolutions' product. Sweep values are shown as given; CSV and JSON
// keep every digit.
constexpr double kRoundOffUlps = 16;
struct RowResolution {
  double amps = 0, volts = 0, watts = 0;
};

RowResolution ResolutionOf(const Report& report) {
  RowResolution r;
  r.amps = report.account.max_kcl_residual > 0 ? report.account.max_kcl_residual : 0;
  double largest = 0;
  for (const std::vector<double>& row : report.rows) {
    for (size_t i = 0; i < row.size() && i < report.columns.size(); ++i) {
      if (report.columns[i].unit == "V" && std::isfinite(row[i])) {
        largest = std::max(largest, std::fabs(row[i]));
      }
    }
  }
  r.volts = kRoundOffUlps * std::numeric_limits<double>::epsilon() * largest;
  r.watts = r.amps * r.volts;
  return r;
}

bool BelowResolution(const RowResolution& r, double value, const std::string& unit) {
  const double limit = unit == "A" ? r.amps : unit == "V" ? r.volts : unit == "W" ? r.watts : 0;
  return limit > 0 && std::fabs(value) < limit;
}

std::string Cell(const Report& report, const RowResolution& resolution, size_t column, double value,
                 bool* zeroed) {
  const std::string& unit = report.columns[column].unit;
  if (column >= static_cast<size_t>(report.sweep_axes) && value != 0 &&
      BelowResolution(resolution, value, unit)) {
    *zeroed = true;
    return FormatEng(0.0, unit);
  }
  return FormatEng(value, unit);
}

std::string ResolutionNote(const Report& report, bool zeroed) {
  if (!zeroed) return "";
  return fmt::format(
      "  (values zero to the solution's accuracy are shown as 0: currents below the largest "
      "KCL residual, {:.2e} A; voltages and powers within round-off)\n",
      report.account.max_kcl_residual);
}

std::string Vertical(const Report& report) {
  size_t name_width = 0;
  for (const Column& c : report.columns) name_width = std::max(name_width, DisplayWidth(c.name));
  std::string out;
  bool zeroed = false;
  const std::vector<double>& row = report.rows.front();
  const RowResolution resolution = ResolutionOf(report);
  for (size_t i = 0; i < SharedColumns(report); ++i) {
    out += fmt::format("  {}  {}\n", PadRight(report.columns[i].name, name_width),
                       PadLeft(Cell(report, resolution, i, row[i], &zeroed), 12));
  }
  return out + ResolutionNote(report, zeroed);
}

std::string Columns(const Report& report) {
  const size_t n = SharedColumns(report);
  std::vector<std::string> head(n);
  std::vector<size_t> width(n);
  for (size_t i = 0; i < n; ++i) {
    const Column& c = report.columns[i];
    head[i] = c.name;  // the cells carry their units
    width[i] = std::max<size_t>(DisplayWidth(head[i]), 10);
  }
  std::vector<std::vector<std::string>> cells;
  cells.reserve(report.rows.size());
  bool zeroed = false;
  const RowResolution resolution = ResolutionOf(report);
  for (const auto& row : report.rows) {
    std::vector<std::string> line(n);
    for (size_t i = 0; i < n; ++i) {
      line[i] = Cell(report, resolution, i, row[i], &zeroed);
      width[i] = std::max(width[i], DisplayWidth(line[i]));
    }
    cells.push_back(std::move(line));
  }
  // Two blanks between columns, so that headers with blanks inside ("(a.v - b.v)") stay
  // apart from their neighbours.
  const bool marks = !report.row_over_rating.empty();
  std::string out = " ";
  for (size_t i = 0; i < n; ++i) {
    out += "  " + PadLeft(head[i], width[i]);
    if (i + 1 == static_cast<size_t>(report.sweep_axes) && i + 1 < n) out += "  │";
  }
  out += "\n";
  for (size_t r = 0; r < cells.size(); ++r) {
    const auto& line = cells[r];
    out += marks && report.row_over_rating[r] ? "!" : " ";
    for (size_t i = 0; i < n; ++i) {
      out += "  " + PadLeft(line[i], width[i]);
      if (i + 1 == static_cast<size_t>(report.sweep_axes) && i + 1 < n) out += "  │";
    }
    out += "\n";
  }
  return out + ResolutionNote(report, zeroed);
}

std::string Stress(const Report& report) {
  if (report.stress.empty()) return "";
  std::string out =
      fmt::format("\nstress (each rating usable to {:g} %):\n", report.derate_percent);
  size_t name_width = 0;
  for (const StressLine& s : report.stress)
    name_width = std::max(name_width, DisplayWidth(s.diode));
  for (const StressLine& s : report.stress) {
    std::string at = s.where.empty() ? "" : " at " + s.where;
    const std::string verdict = !s.rated ? "info    " : s.exceeded ? "EXCEEDED" : "ok      ";
    // Values are magnitudes in the named direction; one that never goes that way is named
    // as such rather than shown as a negative worst.
    std::string worst;
    if (!s.never.empty()) {
      worst = s.never;
    } else if (std::isnan(s.worst)) {
      worst = "no solved point";
    } else {
      worst = fmt::format("worst {:>10}{}{}", FormatEng(s.worst, s.unit),
                          s.direction.empty() ? "" : " (" + s.direction + ")", at);
    }
    const std::string rating =
        s.rated ? fmt::format(", rating {} ({}): {:.0f} % of rating", FormatEng(s.rating, s.unit),
                              s.key, s.never.empty() ? s.use_percent : 0.0)
                : std::string("; no rating of its own (max_power covers breakdown)");
    out += fmt::format("  {} {}  {:<15}  {}{}\n", verdict, PadRight(s.diode, name_width),
                       s.quantity, worst, rating);
  }
  const bool any_marked = std::find(report.row_over_rating.begin(), report.row_over_rating.end(),
                                    1) != report.row_over_rating.end();
  if (any_marked && report.sweep_axes > 0) {
    out += "  (rows marked ! exceed a rating)\n";
  }
  return out;
}

}  // namespace

std::string WriteTable(const Report& report) {
  std::string out = Header(report);
  for (const std::string& caution : report.cautions) out += "CAUTION: " + caution + "\n";
  out += "\n";
  if (!report.rows.empty()) {
    out += report.sweep_axes == 0 && report.rows.size() == 1 ? Vertical(report) : Columns(report);
  }
  out += Stress(report);
  if (!report.expectations.empty()) out += "\n" + Expectations(report);
  if (!report.failures.empty()) {
    out += "\n";
    for (const PointFailure& f : report.failures) {
      out += f.where.empty() ? fmt::format("  NO SOLUTION: {}\n", f.why)
                             : fmt::format("  NO SOLUTION at {}: {}\n", f.where, f.why);
    }
  }
  out += "\n" + Account(report);
  return out;
}

}  // namespace knee::cli
