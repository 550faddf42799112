// Stress checks end to end: each rating exceeded and not, in bias and in sweeps, the
// worst point located, --derate, and exit statuses (docs/stress.md).
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>

#include "run_knee.h"

namespace knee::testing {
namespace {

using nlohmann::json;

// A clamp: Vin through 1k into a node clamped to a 3.3 V rail by D1. Ratings are filled
// in per test.
std::string Clamp(const std::string& ratings) {
  return "part p diode sat_current=4n ideality=1.9 series_res=0.8 breakdown_v=30 " + ratings +
         "\nvsource Vin in -> gnd 12\nvsource Vr rail -> gnd 3.3\n"
         "resistor R1 in -> pin 1k\ndiode D1 pin -> rail p\ndiode D2 gnd -> pin p\n";
}

// The rated lines of the stress report (a breakdown diode's reverse current is reported
// beside them without a rating).
json Stress(const KneeRun& run) {
  const json all = json::parse(run.out)["stress"];
  json rated = json::array();
  for (const json& line : all) {
    if (!line["rating_key"].is_null()) rated.push_back(line);
  }
  return rated;
}

TEST(Stress, EachRatingExceededAndNotInABiasPoint) {
  // At Vin = 12 V, D1 carries about 8 mA forward; D2 sees about 3.9 V reverse and
  // dissipates nanowatts; D1 dissipates about 8 mA * 0.8 V.
  struct Case {
    std::string ratings;
    int status;
  };
  for (const Case& c :
       {Case{"max_current=20m", 0}, Case{"max_current=5m", 3}, Case{"max_reverse_v=10", 0},
        Case{"max_reverse_v=3", 3}, Case{"max_power=50m", 0}, Case{"max_power=2m", 3}}) {
    KneeRun run = RunKnee("bias - --format json", Clamp(c.ratings));
    EXPECT_EQ(run.status, c.status) << c.ratings << "\n" << run.err;
    const json stress = Stress(run);
    ASSERT_EQ(stress.size(), 2u) << c.ratings;  // one rating, two diodes
    bool exceeded = false;
    for (const auto& s : stress) exceeded |= s["exceeded"].get<bool>();
    EXPECT_EQ(exceeded, c.status == 3) << c.ratings;
  }
}

TEST(Stress, NoRatingsNoStressSection) {
  KneeRun run = RunKnee("bias - --format json", Clamp(""));
  EXPECT_EQ(run.status, 0);
  EXPECT_TRUE(Stress(run).empty());
}

// D1's current at Vin, from the engine's bias point.
double D1Current(double vin) {
  std::ostringstream set;
  set.precision(17);
  set << vin;
  KneeRun run =
      RunKnee("bias - --format json --show D1.i --set Vin=" + set.str(), Clamp("max_current=5m"));
  return json::parse(run.out)["rows"][0][0].get<double>();
}

TEST(Stress, SweepLocatesTheWorstPointAndWhereTheRatingIsCrossed) {
  KneeRun run = RunKnee("sweep - Vin=0..24:0.05 --format json", Clamp("max_current=5m"));
  ASSERT_EQ(run.status, 3) << run.err;
  const json stress = Stress(run);
  const json& d1 = stress[0];
  EXPECT_EQ(d1["diode"], "D1");
  EXPECT_EQ(d1["rating_key"], "max_current");
  EXPECT_EQ(d1["where"], "Vin = 24 V");  // the current rises with Vin: worst at the end
  EXPECT_TRUE(d1["exceeded"].get<bool>());
  const json& d2 = stress[1];
  EXPECT_EQ(d2["diode"], "D2");
  EXPECT_FALSE(d2["exceeded"].get<bool>());

  // The crossing of 5 mA, found independently by bisection on bias points.
  double lo = 0, hi = 24;
  for (int i = 0; i < 60; ++i) {
    const double mid = 0.5 * (lo + hi);
    (D1Current(mid) > 5e-3 ? hi : lo) = mid;
  }
  // The CSV's use column of D1's max_current passes 100 % exactly between the grid points
  // on either side of the crossing.
  KneeRun csv = RunKnee("sweep - Vin=0..24:0.05 --format csv", Clamp("max_current=5m"));
  std::istringstream lines(csv.out);
  std::string line;
  std::getline(lines, line);
  const size_t column = static_cast<size_t>(std::count(line.begin(), line.end(), ',')) - 1;
  ASSERT_NE(line.find("D1.i/max_current [%]"), std::string::npos) << line;
  double first_over = NAN, last_under = NAN;
  while (std::getline(lines, line)) {
    std::vector<double> cells;
    std::istringstream row(line);
    std::string cell;
    while (std::getline(row, cell, ',')) cells.push_back(std::stod(cell));
    if (cells[column] > 100 && std::isnan(first_over)) first_over = cells[0];
    if (cells[column] <= 100) last_under = cells[0];
  }
  EXPECT_LE(last_under, lo);
  EXPECT_GE(first_over, hi);
  EXPECT_NEAR(first_over - last_under, 0.05, 1e-9);
}

TEST(Stress, DerateChangesTheVerdictAtTheMargin) {
  // D1 carries I12 at Vin = 12 V; a rating of 10 mA is used to I12 / 10 mA.
  const double i12 = D1Current(12);
  const double use = i12 / 10e-3;  // about 0.8
  ASSERT_GT(use, 0.5);
  ASSERT_LT(use, 0.95);
  const std::string net = Clamp("max_current=10m");
  auto status_at = [&](double derate_percent) {
    std::ostringstream arg;
    arg << derate_percent;
    return RunKnee("bias - --derate " + arg.str(), net).status;
  };
  EXPECT_EQ(status_at(100), 0);
  EXPECT_EQ(status_at(100 * use + 0.5), 0);  // just above the use: still within
  EXPECT_EQ(status_at(100 * use - 0.5), 3);  // just below: exceeded
}

}  // namespace
}  // namespace knee::testing

namespace knee::testing {
namespace {

TEST(Stress, ChartShadesTheRangeWhereARatingIsExceeded) {
  const std::string over = TempPath("over.svg");
  const std::string within = TempPath("within.svg");
  EXPECT_EQ(
      RunKnee("sweep - Vin=0..24:0.5 --show D1.i --plot " + over, Clamp("max_current=5m")).status,
      3);
  EXPECT_EQ(RunKnee("sweep - Vin=0..24:0.5 --show D1.i --plot " + within, Clamp("max_current=50m"))
                .status,
            0);
  EXPECT_NE(ReadWhole(over).find("class=\"over-rating\""), std::string::npos);
  EXPECT_EQ(ReadWhole(within).find("class=\"over-rating\""), std::string::npos);
  std::remove(over.c_str());
  std::remove(within.c_str());
}

}  // namespace
}  // namespace knee::testing
