// The side-by-side report of `knee hand`: every diode and node under the exact model and
// each simplified model, with the errors, and its writers (table, CSV, JSON, SVG chart).
// The layouts are documented in docs/hand-models.md and docs/json-schema.md.
#pragma once

#include <string>
#include <vector>

#include "report.h"

namespace knee::cli {

struct HandModelColumn {
  std::string name;         // "exact", "ideal", "drop", "pwl"
  std::string description;  // "0 V on, open off", ...
  bool has_answer = false;  // numbers below are usable for this model
  // Simplified models only: the state search.
  std::string search_status;  // "unique", "found, uniqueness not checked", ...
  bool exhaustive = true;
  long long sets_tried = 0;
  long long singular_sets = 0;
  long long consistent_sets = 0;
  std::string detail;         // why there is no answer, or the equivalent sets
  bool states_match = false;  // every diode's state equals the exact one
};

struct HandDiodeRow {
  std::string name;
  std::vector<std::string> state;  // per model ("on", "off", "breakdown", "" = no answer)
  std::vector<double> v, i;        // per model; NaN where the model has no answer
  double rd = 0;                   // Ohm, n*Vt/|I| at the exact bias point; NaN when off
};

struct HandNodeRow {
  std::string name;
  std::vector<double> v;  // per model
};

// One expectation with the simplified models' values of its quantity beside the check.
struct HandExpectation {
  ExpectationCheck check;      // against the exact bias point
  std::vector<double> models;  // value per model (index 0 = exact); NaN when not defined
};

struct HandReport {
  std::string title;
  std::string file;
  double temp = 25;
  std::vector<HandModelColumn> models;  // [0] is the exact model
  std::vector<HandDiodeRow> diodes;
  std::vector<HandNodeRow> nodes;
  std::vector<HandExpectation> expectations;
  std::vector<std::string> cautions;
  std::string exact_failure;  // "" when the exact solve converged
  SolverAccount account;
};

std::string WriteHandTable(const HandReport& report);
std::string WriteHandCsv(const HandReport& report);
std::string WriteHandJson(const HandReport& report);
std::string WriteHandReport(const HandReport& report, ReportFormat format);
// Grouped bars: each diode's current under every model.
std::string DrawHandChart(const HandReport& report);

}  // namespace knee::cli
