// What `knee spread` hands to its report writers (docs/spread.md, docs/json-schema.md):
// the samples, one row each, and the statistics of every quantity and check.
#pragma once

#include <functional>
#include <optional>
#include <span>
#include <string>
#include <string_view>
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

// Rows of one width in one array: a run of a million samples is one allocation, and a
// column is read at a stride instead of through a pointer per row.
class SampleTable {
 public:
  void Assign(size_t rows, size_t width, double fill) {
    rows_ = rows;
    width_ = width;
    cells_.assign(rows * width, fill);
  }
  size_t size() const { return rows_; }
  bool empty() const { return rows_ == 0; }
  size_t width() const { return width_; }
  std::span<double> operator[](size_t row) { return {cells_.data() + row * width_, width_}; }
  std::span<const double> operator[](size_t row) const {
    return {cells_.data() + row * width_, width_};
  }
  double at(size_t row, size_t column) const { return cells_[row * width_ + column]; }

  class ConstIterator {
   public:
    ConstIterator(const SampleTable* table, size_t row) : table_(table), row_(row) {}
    std::span<const double> operator*() const { return (*table_)[row_]; }
    ConstIterator& operator++() {
      ++row_;
      return *this;
    }
    bool operator!=(const ConstIterator& other) const { return row_ != other.row_; }

   private:
    const SampleTable* table_;
    size_t row_;
  };
  ConstIterator begin() const { return {this, 0}; }
  ConstIterator end() const { return {this, rows_}; }

 private:
  size_t rows_ = 0, width_ = 0;
  std::vector<double> cells_;
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
  SampleTable rows;
  std::vector<std::string> failures;  // per row: "" or why the sample has no solution
  long long unsolved = 0;
  SolverAccount account;
  std::vector<std::string> cautions;
};

std::string WriteSpreadTable(const SpreadReport& report);
// Takes each piece of text and returns "" or why it could not be written.
using SpreadTextSink = std::function<std::string(std::string_view piece)>;

std::string WriteSpreadCsv(const SpreadReport& report);
// The same text in pieces of about 64 kB; stops at and returns the first message of `emit`.
std::string WriteSpreadCsv(const SpreadReport& report, const SpreadTextSink& emit);
std::string WriteSpreadJson(const SpreadReport& report);
std::string WriteSpread(const SpreadReport& report, ReportFormat format);
// One histogram panel per quantity with its bounds marked; a complete SVG document.
std::string DrawSpreadHistograms(const SpreadReport& report);

}  // namespace knee::cli
