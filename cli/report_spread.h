// What `knee spread` hands to its report writers (docs/spread.md, docs/json-schema.md):
// the samples, one row each, and the statistics of every quantity and check.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "report.h"
#include "spread_plan.h"

namespace knee::cli {

// An expect statement or a rating, judged per sample by its margin (>= 0: passes).
struct SpreadCheck {
  bool rating = false;
  std::string name;  // "out.v <= 5.5 V", "D1.i/max_current"
  std::string unit;  // of the margin and the value
  // Statistics over the samples of this run.
  long long passing = 0;
  long long samples = 0;
  double yield = 0;
  double low = 0, high = 0;  // 95 % Wilson score interval
  bool pass = true;          // as --yield says
  long long worst_row = -1;  // row with the least margin (solved samples)
  double worst_value = 0;    // the checked value there
  double worst_margin = 0;
  // A rating whose value never goes the rated way in any sample ("never reverse-biased"):
  // the signed worst value is then the least of the other way and reads as nonsense.
  std::string never;
  struct Mover {
    std::string target;  // a draw column
    double measure = 0;  // Spearman's rho, or the main effect on the margin (corners)
  };
  std::vector<Mover> movers;  // largest |measure| first, at most 3
};

struct SpreadQuantity {
  std::string name;  // "out.v", "min(out.v)", "max(out.v)"
  std::string unit;
  double nominal = 0;
  long long solved = 0;
  double mean = 0, std_dev = 0, min = 0, max = 0;
  double q_low = 0, q_median = 0, q_high = 0;     // 0.135 %, 50 %, 99.865 %
  std::vector<std::pair<double, double>> bounds;  // (value, +1 for <=, -1 for >=) for charts
};

struct SpreadReport {
  std::string title, file;
  std::string of;  // "bias point" or "sweep"
  double temp = 25;
  bool corners = false;
  unsigned long long seed = 1;
  long long total = 0;  // samples (or corners) of the whole run, every shard
  long long first = 1;  // number of the first sample of this slice
  std::optional<double> yield_target;
  bool csv_header = true;
  std::vector<VaryLine> varies;
  std::vector<DrawColumn> columns;
  std::vector<double> nominal_draws;
  std::vector<SpreadQuantity> quantities;
  std::vector<SpreadCheck> checks;
  // Per sample: draws, then quantities, then one margin per check (NaN when unsolved).
  std::vector<std::vector<double>> rows;
  std::vector<std::string> failures;  // per row: "" or why the sample has no solution
  long long unsolved = 0;
  SolverAccount account;
  std::vector<std::string> cautions;
};

std::string WriteSpreadTable(const SpreadReport& report);
std::string WriteSpreadCsv(const SpreadReport& report);
std::string WriteSpreadJson(const SpreadReport& report);
std::string WriteSpread(const SpreadReport& report, ReportFormat format);
// One histogram panel per quantity with its bounds marked; a complete SVG document.
std::string DrawSpreadHistograms(const SpreadReport& report);

}  // namespace knee::cli
