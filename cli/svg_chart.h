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
