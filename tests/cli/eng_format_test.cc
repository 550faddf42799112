#include "eng_format.h"

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <limits>
#include <random>
#include <string>

namespace knee::cli {
namespace {

// SI prefixes per the SI Brochure (BIPM, 9th edition, 2019), Table 7.
TEST(FormatEng, PicksThePrefixOfTheMantissa) {
  EXPECT_EQ(FormatEng(0.6523, "V"), "652.3 mV");
  EXPECT_EQ(FormatEng(4.31e-3, "A"), "4.31 mA");
  EXPECT_EQ(FormatEng(2.5e-9, "A"), "2.5 nA");
  EXPECT_EQ(FormatEng(1.5e-6, "A"), "1.5 µA");
  EXPECT_EQ(FormatEng(4700, "Ohm"), "4.7 kΩ");
  EXPECT_EQ(FormatEng(-12, "V"), "-12 V");
  EXPECT_EQ(FormatEng(3.2e-13, "A"), "320 fA");
  EXPECT_EQ(FormatEng(2.2e6, "Ohm"), "2.2 MΩ");
}

TEST(FormatEng, RoundsBeforeChoosingThePrefix) {
  EXPECT_EQ(FormatEng(0.99996, "V"), "1 V");
  EXPECT_EQ(FormatEng(999.96e-6, "A"), "1 mA");
}

TEST(FormatEng, HandlesZeroTinyAndNonFinite) {
  EXPECT_EQ(FormatEng(0.0, "V"), "0 V");
  EXPECT_EQ(FormatEng(1.2e-30, "A"), "1.2e-30 A");  // beyond the smallest prefix
  EXPECT_EQ(FormatEng(std::numeric_limits<double>::quiet_NaN(), "V"), "—");
  EXPECT_EQ(FormatEng(std::numeric_limits<double>::infinity(), "V"), "inf V");
  EXPECT_EQ(FormatEng(1.5, ""), "1.5");
}

// Issue 20, item 8: small and large values keep engineering notation (SI Brochure, BIPM,
// 9th edition, 2019, Table 7: a 1e-18, z 1e-21, y 1e-24, P 1e15, E 1e18), a plain number
// takes no prefix, and a coefficient per kelvin reads in ppm/K or %/K.
TEST(FormatEng, Item8FormattingSlips) {
  EXPECT_EQ(FormatEng(1.242e-17, "W"), "12.42 aW");
  EXPECT_EQ(FormatEng(1e-19, "A", 3), "100 zA");
  EXPECT_EQ(FormatEng(3.3e-24, "A"), "3.3 yA");
  EXPECT_EQ(FormatEng(2.5e15, "Ohm"), "2.5 PΩ");
  EXPECT_EQ(FormatEng(0.5, ""), "0.5");
  EXPECT_EQ(FormatEng(1.5e-7, ""), "1.5e-7");
  EXPECT_EQ(FormatEng(350e-6, "1/K"), "350 ppm/K");
  EXPECT_EQ(FormatEng(-4e-4, "1/K"), "-400 ppm/K");
  EXPECT_EQ(FormatEng(0.05, "1/K"), "5 %/K");
  EXPECT_EQ(FormatEng(0.0, "1/K"), "0 /K");
}

TEST(FormatRoundTrip, ReadsBackToTheSameDouble) {
  for (double v : {0.1, 1.0 / 3.0, -2.5e-14, 6.02214076e23, 0.6523456789012345}) {
    const std::string text = FormatRoundTrip(v);
    EXPECT_EQ(std::strtod(text.c_str(), nullptr), v) << text;
  }
  EXPECT_EQ(FormatRoundTrip(std::nan("")), "nan");
}

}  // namespace
}  // namespace knee::cli

namespace knee::cli {
namespace {

// The reference is {fmt}'s "{}" for a double (fmt 9, the layout of every CSV knee has
// written): WriteRoundTrip must give the same bytes for every double, and read back to it.
void ExpectLikeFmt(double v) {
  char text[kRoundTripChars];
  const std::string got(text, WriteRoundTrip(v, text));
  ASSERT_EQ(got, std::isnan(v) ? std::string("nan") : fmt::format("{}", v)) << std::hexfloat << v;
  if (!std::isnan(v)) {
    ASSERT_EQ(std::strtod(got.c_str(), nullptr), v) << got;
  }
}

TEST(WriteRoundTrip, MatchesFmtOnTheEdgesOfEachLayout) {
  const double edges[] = {0.0,
                          -0.0,
                          1.0,
                          -1.0,
                          0.1,
                          1e-4,
                          1e-5,
                          9.9999e-5,
                          1.5e-5,
                          0.00012,
                          1e15,
                          1e16,
                          9.999999999999998e15,
                          1e17,
                          123456789012345.6,
                          1234567890123456.7,
                          1500.0,
                          2.5e-308,
                          5e-324,
                          1.7976931348623157e308,
                          4.9406564584124654e-324,
                          20.0,
                          -19.9,
                          0.05,
                          47.0,
                          1e100,
                          -1e-100,
                          9007199254740993.0,
                          HUGE_VAL,
                          -HUGE_VAL,
                          std::numeric_limits<double>::quiet_NaN()};
  for (double v : edges) ExpectLikeFmt(v);
}

TEST(WriteRoundTrip, MatchesFmtOnRandomDoubles) {
  // Random bit patterns cover every exponent; random decimals of a few digits cover the
  // values sweeps produce (-20..20:0.0001 and friends). Fixed seed: the same doubles in
  // every run.
  std::mt19937_64 bits(20261203);
  for (int k = 0; k < 200000; ++k) {
    const std::uint64_t b = bits();
    ExpectLikeFmt(std::bit_cast<double>(b));
  }
  std::uniform_int_distribution<int> digits(-400000, 400000);
  std::uniform_int_distribution<int> scale(-12, 18);
  for (int k = 0; k < 200000; ++k) {
    ExpectLikeFmt(digits(bits) * std::pow(10.0, scale(bits) - 4));
  }
}

}  // namespace
}  // namespace knee::cli
