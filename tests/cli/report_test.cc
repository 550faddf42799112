#include "report.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>

#include "svg_chart.h"

namespace knee::cli {
namespace {

Report SweepReport() {
  Report r;
  r.title = "demo";
  r.file = "demo.knee";
  r.analysis = "sweep";
  r.temp = 25;
  r.sweep_axes = 1;
  r.columns = {{"Vin", "V"}, {"out.v", "V"}, {"D1.i", "A"}};
  r.rows = {{0.0, 0.0, 1e-12}, {1.0, 0.35, 2.5e-3}, {2.0, std::nan(""), std::nan("")}};
  r.failures.push_back({2, "Vin = 2 V", "no convergence: test"});
  r.account.method = "Newton-Raphson";
  r.account.points = 3;
  r.account.newton_steps = 12;
  r.account.max_kcl_residual = 1e-15;
  r.account.worst_node = "out";
  return r;
}

TEST(WriteCsv, HeaderWithUnitsThenOneRowPerPoint) {
  const std::string csv = WriteCsv(SweepReport());
  EXPECT_EQ(csv,
            "Vin [V],out.v [V],D1.i [A]\n"
            "0,0,1e-12\n"
            "1,0.35,0.0025\n"
            "2,nan,nan\n");
}

TEST(WriteCsv, QuotesNamesWithCommasAndSkipsTheHeaderForLaterShards) {
  Report r = SweepReport();
  r.columns[1].name = "(max(a.v,b.v))";
  EXPECT_EQ(WriteCsv(r).substr(0, 30), "Vin [V],\"(max(a.v,b.v)) [V]\",D");
  r.csv_header = false;
  EXPECT_EQ(WriteCsv(r).substr(0, 6), "0,0,1e");
}

TEST(WriteJson, CarriesTheSchemaMembers) {
  const auto j = nlohmann::json::parse(WriteJson(SweepReport()));
  EXPECT_EQ(j["format"], "knee-result/1");
  EXPECT_EQ(j["analysis"], "sweep");
  EXPECT_EQ(j["columns"].size(), 3u);
  EXPECT_EQ(j["columns"][2]["unit"], "A");
  EXPECT_EQ(j["rows"].size(), 3u);
  EXPECT_TRUE(j["rows"][2][1].is_null());
  EXPECT_DOUBLE_EQ(j["rows"][1][2].get<double>(), 2.5e-3);
  EXPECT_EQ(j["failures"][0]["row"], 2);
  EXPECT_EQ(j["solver"]["newton_steps"], 12);
  EXPECT_DOUBLE_EQ(j["solver"]["max_kcl_residual_a"].get<double>(), 1e-15);
}

TEST(WriteTable, HeaderNumbersFailuresAndFooter) {
  const std::string table = WriteTable(SweepReport());
  EXPECT_EQ(table.substr(0, table.find('\n')), "\"demo\": sweep at 25 °C");
  EXPECT_NE(table.find("350 mV"), std::string::npos);
  EXPECT_NE(table.find("2.5 mA"), std::string::npos);
  EXPECT_NE(table.find("NO SOLUTION at Vin = 2 V"), std::string::npos);
  EXPECT_NE(table.find("solver: Newton-Raphson, 3 points, 12 Newton steps"), std::string::npos);
  EXPECT_NE(table.find("largest KCL residual 1.00e-15 A at out"), std::string::npos);
}

TEST(WriteTable, StressSectionMarksExceededRatings) {
  Report r = SweepReport();
  r.row_over_rating = {0, 1, 0};
  StressLine line;
  line.diode = "D1";
  line.key = "max_current";
  line.quantity = "forward current";
  line.unit = "A";
  line.worst = 2.5e-3;
  line.rating = 2e-3;
  line.limit = 2e-3;
  line.use_percent = 125;
  line.exceeded = true;
  line.where = "Vin = 1 V";
  r.stress.push_back(line);
  const std::string table = WriteTable(r);
  EXPECT_NE(table.find("EXCEEDED D1  forward current"), std::string::npos) << table;
  EXPECT_NE(table.find("at Vin = 1 V"), std::string::npos);
  EXPECT_NE(table.find("125 % of rating"), std::string::npos);
  EXPECT_NE(table.find("\n! "), std::string::npos);
}

TEST(LinearTicks, StepsOfOneTwoOrFive) {
  const std::vector<double> ticks = LinearTicks(-20, 20, 6);
  ASSERT_GE(ticks.size(), 3u);
  const double step = ticks[1] - ticks[0];
  EXPECT_DOUBLE_EQ(step, 10.0);
  EXPECT_DOUBLE_EQ(ticks.front(), -20.0);
  EXPECT_DOUBLE_EQ(ticks.back(), 20.0);
}

TEST(DrawSweepChart, OnePathPerTraceAndWellFormedRoot) {
  Report r = SweepReport();
  const std::string svg = DrawSweepChart(r, ChartOptions{});
  size_t paths = 0;
  for (size_t at = svg.find("<path class=\"trace\""); at != std::string::npos;
       at = svg.find("<path class=\"trace\"", at + 1)) {
    ++paths;
  }
  EXPECT_EQ(paths, 2u);  // out.v and D1.i
  EXPECT_EQ(svg.rfind("</svg>\n"), svg.size() - 7);
}

}  // namespace
}  // namespace knee::cli
