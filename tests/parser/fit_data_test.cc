// The points file of knee fit (docs/fit.md, "The data file").
#include "knee/fit_data.h"

#include <gtest/gtest.h>

#include "test_util.h"

namespace knee {
namespace {

TEST(FitData, UnitsInTheHeaderScaleTheColumn) {
  Result<FitData> d = ReadFitData(
      "# bench run\n"
      "\n"
      "v [mV], i [mA], temp [K], weight\n"
      "652.3, 4k7, 298.15, 2\r\n"
      "700,10,348.15,1\n",
      "p.csv");
  ASSERT_TRUE(d.ok()) << d.errors().front().message;
  ASSERT_EQ(d->points.size(), 2u);
  EXPECT_CLOSE(d->points[0].v, 0.6523, 1e-15, 0);
  EXPECT_CLOSE(d->points[0].i, 4.7, 1e-15, 0);  // 4k7 mA
  EXPECT_CLOSE(d->points[0].temp, 25, 1e-12, 1e-12);
  EXPECT_EQ(d->points[0].weight, 2);
  EXPECT_EQ(d->points[1].i_where.line, 5);
  EXPECT_EQ(d->points[1].i_where.column, 5);
  EXPECT_TRUE(d->has_temp_column);
}

TEST(FitData, CellsTakeTheNetlistNumberSyntax) {
  Result<FitData> d = ReadFitData("i,v\n10mA,0.7V\n2u,650m\n", "p.csv");
  ASSERT_TRUE(d.ok()) << d.errors().front().message;
  EXPECT_CLOSE(d->points[0].i, 0.01, 1e-15, 0);
  EXPECT_CLOSE(d->points[1].v, 0.65, 1e-15, 0);
  EXPECT_FALSE(d->has_temp_column);
}

TEST(FitData, ProblemsAreLocated) {
  struct Case {
    const char* text;
    int line, column;
    const char* message;
  };
  for (const Case& c : {
           Case{"v,i\n0.6,1mV\n", 2, 5, "unit 'V' does not fit column 'i'"},
           Case{"v [V],i [mA]\n0.6,1mA\n", 2, 5, "already gives [mA]"},
           Case{"v,curent\n", 1, 3, "unknown column 'curent'"},
           Case{"v,i,v\n", 1, 5, "column 'v' is given twice"},
           Case{"v,i\n0.6,1m,3\n", 2, 8, "the row has 3 cells"},
           Case{"v,i\n0.6,\n", 2, 5, "empty cell in column 'i'"},
           Case{"", 1, 1, "the file is empty"},
       }) {
    Result<FitData> d = ReadFitData(c.text, "p.csv");
    ASSERT_FALSE(d.ok()) << c.text;
    const Diagnostic& e = d.errors().front();
    EXPECT_EQ(e.where.line, c.line) << c.text;
    EXPECT_EQ(e.where.column, c.column) << c.text;
    EXPECT_NE(e.message.find(c.message), std::string::npos) << e.message;
  }
}

TEST(FitData, OptionsNameTheirFaults) {
  EXPECT_FALSE(MakeFitOptions("ideality,sat_curent", {}).ok());
  EXPECT_FALSE(MakeFitOptions("max_current", {}).ok());
  EXPECT_FALSE(MakeFitOptions("series_res", {"series_res=1"}).ok());
  EXPECT_FALSE(MakeFitOptions("", {"series_res=-1"}).ok());
  Result<FitOptions> o =
      MakeFitOptions("sat_current, ideality", {"series_res=50m", "ref_temp=300K"});
  ASSERT_TRUE(o.ok()) << o.errors().front().message;
  EXPECT_EQ(o->keys.size(), 2u);
  EXPECT_TRUE(o->held[static_cast<int>(FitKey::kSeriesRes)]);
  EXPECT_CLOSE(o->model.series_res, 0.05, 1e-15, 0);
  EXPECT_CLOSE(o->model.ref_temp, 26.85, 1e-12, 0);
}

// The printed literals read back as the netlist reads them, within kFitDigits digits.
TEST(FitData, LiteralsReadBack) {
  for (double v : {2.54321234567e-9, 0.0499999999, 99.9999999999, 1.0, 7.5e-4}) {
    const std::string text = FitValueLiteral(FitKey::kSatCurrent, v);
    EXPECT_CLOSE(ReadFitLiteral(text), v, 5e-8, 0) << text;
  }
  EXPECT_EQ(FitValueLiteral(FitKey::kSeriesRes, 0.0420639171), "42.063917m");
  EXPECT_EQ(FitValueLiteral(FitKey::kSatCurrent, 999.999999999e-12), "1n");
}

}  // namespace
}  // namespace knee
