// The chart of a streamed sweep is drawn from a sample of its rows (ChartSample); it must
// be the chart of every row byte for byte (traces, axes, shaded bands), and the sample's
// size must not grow with the points.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "report.h"
#include "svg_chart.h"

namespace knee::cli {
namespace {

// A two-axis sweep: `points` inner values of Vin over [-10, 10] at two outer values of
// temp, with a voltage and a current that bend, a stretch of failed points (NaN) and a
// range over a rating.
Report ManyPointSweep(int points) {
  Report r;
  r.title = "sample";
  r.sweep_axes = 2;
  r.columns = {{"Vin", "V"}, {"temp", "C"}, {"out.v", "V"}, {"D1.i", "A"}};
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (double temp : {25.0, 85.0}) {
    for (int k = 0; k < points; ++k) {
      const double x = -10 + 20.0 * k / (points - 1);
      const bool failed = x > 2 && x < 2.5;
      const double v = failed ? nan : std::tanh(x) + 0.01 * std::sin(50 * x) + temp / 1000;
      const double i = failed ? nan : 1e-3 * std::exp(x / 4) - 1e-4;
      r.rows.push_back({x, temp, v, i});
      r.row_over_rating.push_back(x > 6 && x < 7 ? 1 : 0);
    }
  }
  return r;
}

Report Sampled(const Report& full, const ChartOptions& options) {
  ChartSample sample(full, options, -10, 10);
  // In windows of 1000 rows, as a streamed sweep hands them over.
  for (size_t start = 0; start < full.rows.size(); start += 1000) {
    const size_t end = std::min(full.rows.size(), start + 1000);
    sample.Add(
        {full.rows.begin() + static_cast<long>(start), full.rows.begin() + static_cast<long>(end)},
        {full.row_over_rating.begin() + static_cast<long>(start),
         full.row_over_rating.begin() + static_cast<long>(end)});
  }
  Report sampled = full;
  sample.MoveInto(&sampled);
  return sampled;
}

// The traces of a chart: its <path class="trace" .../> elements.
std::string Traces(const std::string& svg) {
  std::string traces;
  for (size_t at = svg.find("<path class=\"trace\""); at != std::string::npos;
       at = svg.find("<path class=\"trace\"", at + 1)) {
    traces += svg.substr(at, svg.find("/>", at) - at) + "\n";
  }
  return traces;
}

TEST(ChartSample, DrawsTheChartOfEveryRow) {
  for (bool log_current : {false, true}) {
    ChartOptions options;
    options.log_current = log_current;
    const Report full = ManyPointSweep(200'000);
    const Report sampled = Sampled(full, options);
    EXPECT_LT(sampled.rows.size(), 20'000u);
    const std::string want = DrawSweepChart(full, options);
    const std::string got = DrawSweepChart(sampled, options);
    ASSERT_NE(Traces(want), "");
    EXPECT_EQ(Traces(got), Traces(want)) << "log_current " << log_current;
    EXPECT_TRUE(got == want) << "log_current " << log_current;
    EXPECT_NE(got.find("over-rating"), std::string::npos);
  }
}

TEST(ChartSample, SizeDoesNotGrowWithThePoints) {
  const ChartOptions options;
  const size_t small = Sampled(ManyPointSweep(50'000), options).rows.size();
  const size_t large = Sampled(ManyPointSweep(400'000), options).rows.size();
  EXPECT_LE(large, small + small / 10);
  const Report r = ManyPointSweep(10);
  EXPECT_LE(static_cast<long long>(large), ChartSample::MostRows(2, r, options) + 100);
}

}  // namespace
}  // namespace knee::cli
