// Scripts' CSV: one header row of quantity names with units, one row per point, numbers
// that round-trip a double, nothing else in the stream (cli.md, "Output").
#include <fmt/format.h>

#include <cmath>
#include <iterator>
#include <string_view>

#include "eng_format.h"
#include "report.h"
#include "report_common.h"

namespace knee::cli {
namespace {

// The rows, formatted straight into `out` (FormatRoundTrip's text, without a string per
// cell).
void AppendCsvRows(const Report& report, fmt::memory_buffer& out) {
  out.reserve(out.size() + report.rows.size() * report.columns.size() * 24);
  for (const auto& row : report.rows) {
    for (size_t i = 0; i < row.size(); ++i) {
      if (i) out.push_back(',');
      AppendRoundTrip(row[i], out);
    }
    out.push_back('\n');
  }
}

}  // namespace

std::string WriteCsvHeader(const Report& report) {
  std::string out;
  for (size_t i = 0; i < report.columns.size(); ++i) {
    const Column& c = report.columns[i];
    if (i) out += ',';
    // Every column carries a unit cell; "[]" says "a plain number" (a param, a ratio).
    out += CsvField(fmt::format("{} [{}]", c.name, c.unit));
  }
  return out + "\n";
}

std::string WriteCsvRows(const Report& report) {
  fmt::memory_buffer out;
  AppendCsvRows(report, out);
  return fmt::to_string(out);
}

std::string WriteCsv(const Report& report) {
  // Header and rows in one buffer: one copy of a large sweep's text, not two.
  fmt::memory_buffer out;
  if (report.csv_header) {
    const std::string header = WriteCsvHeader(report);
    out.append(std::string_view(header));
  }
  AppendCsvRows(report, out);
  return fmt::to_string(out);
}

}  // namespace knee::cli
