// SVG charts of sweeps: one panel per unit, one trace per quantity and per combination
// of outer sweep values, engineering tick labels, log axes where asked for.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "report.h"

namespace knee::cli {

struct ChartOptions {
  bool log_x = false;        // logarithmic inner axis (set for log sweeps)
  bool log_current = false;  // currents on a logarithmic axis of |I|
  int width = 960;           // px
  int panel_height = 300;    // px per unit panel
};

// The chart of a sweep report (sweep_axes >= 1). Returns a complete SVG document.
std::string DrawSweepChart(const Report& report, const ChartOptions& options);

// The rows of a sweep that its chart can show, gathered while the sweep is streamed a
// window at a time: of the consecutive rows that share their outer values, the pixel
// column of their inner value, which charted values are finite and whether a rating is
// exceeded, only the first, the last, and those with the lowest and highest value (and
// magnitude) of each charted quantity are kept. The chart drawn from them is the one of
// every row at the chart's resolution; their number depends on the chart's width and the
// number of outer values, not on the number of points.
class ChartSample {
 public:
  // x_lo and x_hi: the smallest and largest inner value the sweep will have (finite, and
  // > 0 for a logarithmic axis), which the whole sweep's chart would span.
  ChartSample(const Report& report, const ChartOptions& options, double x_lo, double x_hi);
  // The next rows in sweep order, with their over-rating flags (empty when none).
  void Add(const std::vector<std::vector<double>>& rows, const std::vector<char>& over);
  // Sets report->rows and report->row_over_rating to the kept rows.
  void MoveInto(Report* report);
  size_t size() const { return rows_.size(); }
  // The most rows a sample may keep for a sweep of `lines` outer-value combinations
  // (not counting changes of which values are finite or over a rating).
  static long long MostRows(long long lines, const Report& report, const ChartOptions& options);

 private:
  struct Kept {
    long long index = 0;  // row number in the sweep
    std::vector<double> row;
    char over = 0;
  };
  double PixelColumn(double x) const;
  bool SameGroup(const std::vector<double>& row, char over) const;
  void Flush();

  size_t axes_, charted_;
  bool log_x_;
  double x_lo_, x_hi_;
  int width_;
  long long seen_ = 0;
  bool open_ = false;
  char group_over_ = 0;
  double group_column_ = 0;
  Kept group_first_, group_last_;
  std::vector<Kept> extremes_;  // per charted column: lowest, highest, |lowest|, |highest|
  std::vector<std::vector<double>> rows_;
  std::vector<char> over_;
};

// One axis of a chart: a range, linear or logarithmic (base 10).
struct Axis {
  double lo = 0, hi = 1;
  bool log = false;
  // The pixel of value v when lo..hi spans pixel_lo..pixel_hi.
  double Map(double v, double pixel_lo, double pixel_hi) const;
  std::vector<double> Ticks() const;  // nice linear steps, or the decades of a log axis
};
// An axis over [lo, hi] widened to nice ticks (whole decades when logarithmic).
Axis FitAxis(double lo, double hi, bool log);
// The charts' palette, in order (repeats after eight).
const char* ChartColour(std::size_t index);

// "Nice" tick positions for a linear axis over [lo, hi] (about `target` ticks, steps of
// 1, 2 or 5 times a power of ten).
std::vector<double> LinearTicks(double lo, double hi, int target);

}  // namespace knee::cli
