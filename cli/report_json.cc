// Scripts' JSON: one object, schema "knee-result/1" (docs/json-schema.md).
#include <cmath>
#include <nlohmann/json.hpp>

#include "report.h"
#include "report_common.h"

namespace knee::cli {
namespace {

nlohmann::ordered_json OrNull(bool present, const std::string& text) {
  if (!present) return nullptr;
  return text;
}

}  // namespace

std::string WriteJson(const Report& report) {
  nlohmann::ordered_json j;
  j["format"] = "knee-result/1";
  j["title"] = report.title;
  j["file"] = report.file;
  j["analysis"] = report.analysis;
  // A temperature sweep has no one temperature: temp_c is null and the temperature of each
  // row is its temp column (docs/json-schema.md).
  j["temp_c"] = report.temp_swept ? nlohmann::ordered_json(nullptr) : JsonNumber(report.temp);
  j["temp_swept"] = report.temp_swept;
  j["sweep_columns"] = report.sweep_axes;
  nlohmann::ordered_json columns = nlohmann::ordered_json::array();
  const size_t shared = SharedColumns(report);
  for (size_t i = 0; i < shared; ++i) {
    const Column& c = report.columns[i];
    columns.push_back({{"name", c.name}, {"unit", c.unit}});
  }
  j["columns"] = columns;
  nlohmann::ordered_json rows = nlohmann::ordered_json::array();
  for (const auto& row : report.rows) {
    nlohmann::ordered_json r = nlohmann::ordered_json::array();
    for (size_t i = 0; i < shared; ++i) r.push_back(JsonNumber(row[i]));
    rows.push_back(std::move(r));
  }
  j["rows"] = std::move(rows);
  nlohmann::ordered_json failures = nlohmann::ordered_json::array();
  for (const PointFailure& f : report.failures) {
    failures.push_back({{"row", f.row}, {"where", f.where}, {"why", f.why}});
  }
  j["failures"] = failures;
  nlohmann::ordered_json expectations = nlohmann::ordered_json::array();
  for (const ExpectationCheck& e : report.expectations) expectations.push_back(JsonExpectation(e));
  j["expectations"] = expectations;
  j["solver"] = JsonSolverAccount(report.account);
  nlohmann::ordered_json stress = nlohmann::ordered_json::array();
  for (const StressLine& s : report.stress) {
    stress.push_back({{"diode", s.diode},
                      {"element", s.diode},
                      {"element_kind", s.element_kind},
                      {"rating_key", OrNull(s.rated, s.key)},
                      {"quantity", s.quantity},
                      {"unit", s.unit},
                      {"direction", s.direction},
                      {"never", OrNull(!s.never.empty(), s.never)},
                      {"worst", JsonNumber(s.worst)},
                      {"row", s.row},
                      {"where", s.where},
                      {"rating", JsonNumber(s.rating)},
                      {"limit", JsonNumber(s.limit)},
                      {"use_percent", JsonNumber(s.use_percent)},
                      {"exceeded", s.exceeded}});
  }
  j["derate_percent"] = report.derate_percent;
  j["stress"] = stress;
  j["cautions"] = report.cautions;
  return j.dump(2) + "\n";
}

std::string WriteReport(const Report& report, ReportFormat format) {
  switch (format) {
    case ReportFormat::kTable:
      return WriteTable(report);
    case ReportFormat::kCsv:
      return WriteCsv(report);
    case ReportFormat::kJson:
      return WriteJson(report);
  }
  return {};
}

}  // namespace knee::cli
