// Sweep ranges: every form, floating end points, and malformed ranges with columns.
#include <gtest/gtest.h>

#include <cmath>

#include "parser_test_util.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::AllErrors;
using testing::Brief;
using testing::MustBuild;
using testing::OnlyError;

std::vector<double> Expand(const char* text, bool* log = nullptr) {
  bool logarithmic = false;
  Result<std::vector<double>> r = ExpandRange(text, SourceLocation{"r", 1, 1, 1}, &logarithmic);
  if (log) *log = logarithmic;
  if (!r.ok()) {
    ADD_FAILURE() << text << ": " << r.errors()[0].message;
    return {};
  }
  return *r;
}

std::string RangeError(const char* text) {
  bool log = false;
  Result<std::vector<double>> r = ExpandRange(text, SourceLocation{"r", 3, 10, 1}, &log);
  if (r.ok()) {
    ADD_FAILURE() << text << " expanded without error";
    return "";
  }
  return Brief(r.errors()[0]);
}

TEST(RangesTest, LinearHitsTheEndPointExactly) {
  const std::vector<double> a = Expand("0..1:0.1");
  ASSERT_EQ(a.size(), 11u);
  EXPECT_EQ(a.front(), 0.0);
  EXPECT_EQ(a.back(), 1.0);
  EXPECT_EQ(a[3], 0.3);  // (B - A) * 3 / 10 is the double nearest 0.3, not 0.30000000000000004
  const std::vector<double> b = Expand("-30..30:0.1");
  ASSERT_EQ(b.size(), 601u);
  EXPECT_EQ(b.front(), -30.0);
  EXPECT_EQ(b[300], 0.0);  // the middle point is exactly zero
  EXPECT_EQ(b.back(), 30.0);
  for (std::size_t i = 1; i < b.size(); ++i) {
    EXPECT_CLOSE(b[i] - b[i - 1], 0.1, 1e-9, 0);  // evenly spaced, none lost or duplicated
  }
}

TEST(RangesTest, DecimalPointsAreTheNearestDoubles) {
  // Every point of a decimal grid is the double nearest its decimal value, as strtod
  // would read it (IEEE 754 round to nearest), so CSV shows 0.1, not 0.10000000000000009.
  const std::vector<double> a = Expand("-3..3:0.1");
  ASSERT_EQ(a.size(), 61u);
  for (std::size_t i = 0; i < a.size(); ++i) {
    const int tenths = static_cast<int>(i) - 30;
    const std::string decimal =
        std::to_string(tenths / 10) + "." + std::to_string(std::abs(tenths % 10));
    const double nearest = tenths < 0 && tenths > -10 ? -std::strtod(decimal.c_str() + 1, nullptr)
                                                      : std::strtod(decimal.c_str(), nullptr);
    EXPECT_EQ(a[i], nearest) << decimal;
  }
  const std::vector<double> m = Expand("-30m..30m:1m");
  EXPECT_EQ(m[30], 0.0);
  EXPECT_EQ(m[31], 1e-3);
  EXPECT_EQ(Expand("0..1:5pts")[1], 0.25);
}

TEST(RangesTest, LinearStepSignFollowsTheEnds) {
  EXPECT_EQ(Expand("5..0:1"), (std::vector<double>{5, 4, 3, 2, 1, 0}));
  EXPECT_EQ(Expand("5..0:-1"), (std::vector<double>{5, 4, 3, 2, 1, 0}));
  EXPECT_EQ(Expand("0..5:-1"), (std::vector<double>{0, 1, 2, 3, 4, 5}));
}

TEST(RangesTest, LinearOffTheGridStopsBeforeTheEnd) {
  EXPECT_EQ(Expand("0..1:0.3"), (std::vector<double>{0, 0.3, 0.6, 0.8999999999999999}));
  EXPECT_EQ(Expand("2..2:1"), (std::vector<double>{2}));
}

TEST(RangesTest, LinearWithPrefixes) {
  const std::vector<double> v = Expand("0..10m:1m");
  ASSERT_EQ(v.size(), 11u);
  EXPECT_EQ(v.back(), 0.01);
  EXPECT_EQ(v[5], 0.005);
}

TEST(RangesTest, Logarithmic) {
  bool log = false;
  const std::vector<double> v = Expand("1u..100m:dec20", &log);
  EXPECT_TRUE(log);
  ASSERT_EQ(v.size(), 101u);  // 5 decades x 20 + 1
  EXPECT_EQ(v.front(), 1e-6);
  EXPECT_EQ(v.back(), 0.1);
  EXPECT_CLOSE(v[20], 1e-5, 1e-14, 0);
  EXPECT_CLOSE(v[1] / v[0], std::pow(10.0, 1.0 / 20), 1e-12, 0);
  const std::vector<double> n = Expand("-1..-100:dec1");
  EXPECT_EQ(n, (std::vector<double>{-1, -10, -100}));
  const std::vector<double> down = Expand("100..1:dec1");
  EXPECT_EQ(down, (std::vector<double>{100, 10, 1}));
  const std::vector<double> off = Expand("1..50:dec1");  // 50 is not on the grid
  EXPECT_EQ(off, (std::vector<double>{1, 10}));
}

TEST(RangesTest, Points) {
  EXPECT_EQ(Expand("0..5:11pts"), (std::vector<double>{0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4, 4.5, 5}));
  EXPECT_EQ(Expand("0..1:2pts"), (std::vector<double>{0, 1}));
  EXPECT_EQ(Expand("3..3:1pts"), (std::vector<double>{3}));
  const std::vector<double> v = Expand("0..1:7pts");
  ASSERT_EQ(v.size(), 7u);
  EXPECT_EQ(v.back(), 1.0);
}

TEST(RangesTest, Lists) {
  EXPECT_EQ(Expand("-40,25,85"), (std::vector<double>{-40, 25, 85}));
  EXPECT_EQ(Expand("1k,4k7,10k"), (std::vector<double>{1000, 4700, 10000}));
  EXPECT_EQ(Expand("7"), (std::vector<double>{7}));
}

TEST(RangesTest, MalformedRangesPointAtTheColumn) {
  // The range starts at column 10 of line 3.
  EXPECT_EQ(RangeError("0..1:0"), "3:15: the step of a range must not be zero");
  EXPECT_EQ(RangeError("0..1"), "3:14: range '0..1' needs ':' and a step after the end point");
  EXPECT_EQ(RangeError("0..1:dec10"), "3:10: a logarithmic range cannot start at zero");
  EXPECT_EQ(RangeError("1..0:dec10"), "3:13: a logarithmic range cannot end at zero");
  EXPECT_EQ(RangeError("-1..1:dec10"),
            "3:14: a logarithmic range needs both ends of the same sign; it cannot cross zero");
  EXPECT_EQ(RangeError("1..10:dec0"),
            "3:19: a logarithmic range needs at least 1 point per decade");
  EXPECT_EQ(RangeError("1..10:decx"),
            "3:19: expected a whole number as the points per decade after 'dec'");
  EXPECT_EQ(RangeError("0..1:0pts"), "3:15: a range needs at least 1 point");
  EXPECT_EQ(RangeError("0..1:1pts"), "3:15: a range of 1 point needs equal ends (A..A:1pts)");
  EXPECT_EQ(RangeError("0..1x:1"),
            "3:14: malformed number '1x': 'x' is not an SI prefix or a unit");
  EXPECT_EQ(RangeError("..1:1"), "3:10: expected a number as the start of the range before '..'");
  EXPECT_EQ(RangeError("1,,2"), "3:12: expected a number in the list but found nothing");
  EXPECT_EQ(RangeError("0..1:1e-9"),
            "3:15: range '0..1:1e-9' has 1000000001 points; the limit is 10000000");
  EXPECT_EQ(RangeError(""), "3:10: expected a range but found nothing");
}

TEST(RangesTest, SweepStatementsCheckUnitsAgainstTheTarget) {
  const char* base = "part P diode\nvsource V a -> 0 1\nresistor R a -> b 1k\ndiode D b -> 0 P\n";
  const Design d = MustBuild(std::string(base) +
                             "sweep V 0..1V:0.5V R 1k,2kOhm\nsweep temp 233.15K..298.15K:65\n"
                             "sweep P.sat_current 1fA..1pA:dec1\n");
  ASSERT_EQ(d.sweeps.size(), 3u);
  ASSERT_EQ(d.sweeps[0].size(), 2u);
  EXPECT_EQ(d.sweeps[0][0].values, (std::vector<double>{0, 0.5, 1}));
  EXPECT_EQ(d.sweeps[0][1].target.kind, SweepTarget::Kind::kElement);
  EXPECT_EQ(d.sweeps[0][1].values, (std::vector<double>{1000, 2000}));
  EXPECT_EQ(d.sweeps[1][0].target.kind, SweepTarget::Kind::kTemp);
  ASSERT_EQ(d.sweeps[1][0].values.size(), 2u);
  EXPECT_CLOSE(d.sweeps[1][0].values[0], -40.0, 0, 1e-9);
  EXPECT_CLOSE(d.sweeps[1][0].values[1], 25.0, 0, 1e-9);
  EXPECT_EQ(d.sweeps[2][0].target.kind, SweepTarget::Kind::kPartKey);
  EXPECT_EQ(d.sweeps[2][0].target.key, "sat_current");
  EXPECT_TRUE(d.sweeps[2][0].logarithmic);
  EXPECT_EQ(d.sweeps[2][0].values.size(), 4u);

  EXPECT_EQ(OnlyError(AllErrors(std::string(base) + "sweep R 1..5A:1\n")),
            "5:13: unit 'A' does not fit a resistor value; expected ohms (Ohm, ohm or Ω) or no "
            "unit");
  const auto e = AllErrors(std::string(base) + "sweep Vx 0..1:1\n");
  EXPECT_EQ(OnlyError(e),
            "5:7: unknown sweep target 'Vx'; expected an element, a param, PART.key or temp");
  EXPECT_EQ(e[0].hint, "did you mean 'V'?");
  EXPECT_EQ(OnlyError(AllErrors(std::string(base) + "sweep D 0..1:1\n")),
            "5:7: diode 'D' has no value to sweep; sweep a key of its part (PART.key) or temp");
  EXPECT_EQ(OnlyError(AllErrors(std::string(base) + "sweep P.sat 1..2:1\n")),
            "5:7: unknown part key 'sat'");
  EXPECT_EQ(OnlyError(AllErrors(std::string(base) + "sweep V 0..1:1 V 1..2:1\n")),
            "5:16: sweep target 'V' appears twice in one sweep");
  EXPECT_EQ(OnlyError(AllErrors(std::string(base) + "sweep V\n")),
            "5:8: expected a range after the sweep target 'V' but found the end of the line");
}

TEST(RangesTest, ParamSweepTarget) {
  const Design d = MustBuild(
      "param Rp = 1k\nvsource V a -> 0 1\nresistor R a -> 0 Rp\n"
      "sweep Rp 1k..3k:1k\n");
  EXPECT_EQ(d.sweeps[0][0].target.kind, SweepTarget::Kind::kParam);
  EXPECT_EQ(d.sweeps[0][0].target.name, "Rp");
  EXPECT_EQ(d.sweeps[0][0].values, (std::vector<double>{1000, 2000, 3000}));
}

}  // namespace
}  // namespace knee
