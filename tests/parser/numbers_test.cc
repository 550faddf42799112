// Number literals: every SI prefix, unit and IEC 60062 form of netlist-format.md, and the
// malformed forms with the column of the fault.
#include "numbers.h"

#include <gtest/gtest.h>

#include "parser_test_util.h"

namespace knee {
namespace {

using testing::OnlyError;
using testing::ParseErrors;

double Value(const char* text, std::string* unit = nullptr) {
  NumberLiteral literal;
  NumberError error;
  EXPECT_TRUE(ParseNumber(text, &literal, &error)) << text << ": " << error.message;
  if (unit) *unit = literal.unit;
  return literal.value;
}

NumberError Error(const char* text) {
  NumberLiteral literal;
  NumberError error;
  EXPECT_FALSE(ParseNumber(text, &literal, &error)) << text;
  return error;
}

TEST(NumbersTest, DecimalForms) {
  EXPECT_EQ(Value("12"), 12.0);
  EXPECT_EQ(Value("-0.5"), -0.5);
  EXPECT_EQ(Value("1e-3"), 1e-3);
  EXPECT_EQ(Value(".7"), 0.7);
  EXPECT_EQ(Value("+3"), 3.0);
  EXPECT_EQ(Value("5."), 5.0);
  EXPECT_EQ(Value("2.5E+2"), 250.0);
}

// SI prefixes as in the contract's table (SI Brochure, 9th edition, table 7).
TEST(NumbersTest, EverySiPrefix) {
  EXPECT_EQ(Value("1f"), 1e-15);
  EXPECT_EQ(Value("1p"), 1e-12);
  EXPECT_EQ(Value("1n"), 1e-9);
  EXPECT_EQ(Value("1u"), 1e-6);
  EXPECT_EQ(Value("1\xC2\xB5"), 1e-6);  // U+00B5 MICRO SIGN
  EXPECT_EQ(Value("1\xCE\xBC"), 1e-6);  // U+03BC GREEK SMALL LETTER MU
  EXPECT_EQ(Value("1m"), 1e-3);
  EXPECT_EQ(Value("1k"), 1e3);
  EXPECT_EQ(Value("1M"), 1e6);
  EXPECT_EQ(Value("1G"), 1e9);
  EXPECT_EQ(Value("1T"), 1e12);
  // The prefix is applied in decimal, so the result is the nearest double.
  EXPECT_EQ(Value("2.5n"), 2.5e-9);
  EXPECT_EQ(Value("4.7k"), 4700.0);
  EXPECT_EQ(Value("0.1m"), 1e-4);
  EXPECT_EQ(Value("1e3k"), 1e6);
}

TEST(NumbersTest, EveryUnit) {
  std::string u;
  const std::pair<const char*, const char*> cases[] = {
      {"3V", "V"},     {"3A", "A"},          {"3Ohm", "Ohm"},
      {"3ohm", "Ohm"}, {"3\xCE\xA9", "Ohm"}, {"3\xE2\x84\xA6", "Ohm"},
      {"3W", "W"},     {"3S", "S"},          {"3F", "F"},
      {"3H", "H"},     {"3s", "s"},          {"3Hz", "Hz"},
      {"3K", "K"},     {"3C", "C"}};
  for (const auto& [text, unit] : cases) {
    EXPECT_EQ(Value(text, &u), 3.0) << text;
    EXPECT_EQ(u, unit) << text;
  }
  EXPECT_EQ(Value("5%", &u), 0.05);  // % is the factor 0.01
  EXPECT_EQ(u, "%");
  EXPECT_EQ(Value("100uA", &u), 100e-6);
  EXPECT_EQ(u, "A");
  EXPECT_EQ(Value("4.7kOhm", &u), 4700.0);
  EXPECT_EQ(Value("10mV", &u), 0.01);
  EXPECT_EQ(Value("2MHz", &u), 2e6);
  EXPECT_EQ(Value("1fF", &u), 1e-15);
  EXPECT_EQ(u, "F");
  EXPECT_EQ(Value("3ms", &u), 3e-3);
  EXPECT_EQ(u, "s");
}

// IEC 60062:2016, clause 4 (letter and digit code for resistance and capacitance
// values): the letter stands for the decimal point and gives the multiplier.
TEST(NumbersTest, Iec60062LetterCodes) {
  EXPECT_EQ(Value("4k7"), 4.7e3);
  EXPECT_EQ(Value("2R2"), 2.2);
  EXPECT_EQ(Value("1M5"), 1.5e6);
  EXPECT_EQ(Value("0R1"), 0.1);
  EXPECT_EQ(Value("3m3"), 3.3e-3);
  EXPECT_EQ(Value("4p7"), 4.7e-12);
  EXPECT_EQ(Value("2n2"), 2.2e-9);
  EXPECT_EQ(Value("4\xC2\xB5"
                  "7"),
            4.7e-6);
  EXPECT_EQ(Value("1G2"), 1.2e9);
  EXPECT_EQ(Value("-4k7"), -4.7e3);
  std::string u;
  EXPECT_EQ(Value("4k7Ohm", &u), 4.7e3);  // a unit may follow the code
  EXPECT_EQ(u, "Ohm");
}

TEST(NumbersTest, MalformedForms) {
  NumberError e = Error("1x");
  EXPECT_EQ(e.message, "malformed number '1x': 'x' is not an SI prefix or a unit");
  EXPECT_EQ(e.offset, 1u);
  e = Error("4k7k");
  EXPECT_EQ(e.message, "malformed number '4k7k': 'k' after '4k7' is not a unit");
  EXPECT_EQ(e.offset, 3u);
  EXPECT_EQ(e.hint, "a letter code such as '4k7' already holds the multiplier");
  e = Error("1e");
  EXPECT_EQ(e.message, "malformed number '1e': the exponent after 'e' needs digits, e.g. 1e-3");
  EXPECT_EQ(e.offset, 1u);
  e = Error("--3");
  EXPECT_EQ(e.message, "malformed number '--3': expected a digit after '-'");
  EXPECT_EQ(e.offset, 1u);
  e = Error("5..");
  EXPECT_EQ(e.message, "malformed number '5..': unexpected '.' after '5.'");
  EXPECT_EQ(e.offset, 2u);
  e = Error("1kx");
  EXPECT_EQ(e.message, "malformed number '1kx': 'x' after '1k' is not a unit");
  EXPECT_EQ(e.offset, 2u);
  e = Error("4K7");
  EXPECT_EQ(e.message, "malformed number '4K7': 'K' is not an SI prefix or a unit");
  EXPECT_EQ(e.hint, "did you mean '4k7'? The kilo prefix is a lowercase k");
  e = Error("1e-");
  EXPECT_EQ(e.offset, 1u);
  e = Error("1meg");
  EXPECT_EQ(e.message, "malformed number '1meg': 'eg' after '1m' is not a unit");
  e = Error("1e999");
  EXPECT_EQ(e.message, "number '1e999' is out of the range of a double");
  e = Error("-");
  EXPECT_EQ(e.message, "malformed number '-': expected a digit after '-'");
}

// Through the whole parser: the error points at the column in the file.
TEST(NumbersTest, MalformedFormsInAFileGiveLineAndColumn) {
  EXPECT_EQ(OnlyError(ParseErrors("\nvsource V a -> 0 1x\n")),
            "2:19: malformed number '1x': 'x' is not an SI prefix or a unit");
  EXPECT_EQ(OnlyError(ParseErrors("vsource V a -> 0 1e\n")),
            "1:19: malformed number '1e': the exponent after 'e' needs digits, e.g. 1e-3");
  EXPECT_EQ(OnlyError(ParseErrors("vsource V a -> 0 5..\n")),
            "1:20: malformed number '5..': unexpected '.' after '5.'");
  EXPECT_EQ(OnlyError(ParseErrors("param x = (2 * 4k7k)\n")),
            "1:19: malformed number '4k7k': 'k' after '4k7' is not a unit");
}

TEST(NumbersTest, PlacesAcceptTheirUnits) {
  auto check = [](const char* literal_text, ValuePlace place, bool ok) {
    NumberLiteral literal;
    NumberError error;
    ASSERT_TRUE(ParseNumber(literal_text, &literal, &error));
    double v = 0;
    std::string message, hint;
    EXPECT_EQ(ApplyPlace(literal, literal_text, place, &v, &message, &hint), ok)
        << literal_text << " at " << place.what << ": " << message;
  };
  check("1kOhm", {"r", "Ohm"}, true);
  check("1k", {"r", "Ohm"}, true);
  check("1V", {"r", "Ohm"}, false);
  check("5%", {"r", "Ohm"}, false);
  check("5%", {"tc", "1/K"}, true);
  check("5%", {"n", ""}, true);
  check("1V", {"n", ""}, false);
  check("1.1", {"bandgap", "eV"}, true);
  check("1.1V", {"bandgap", "eV"}, false);
  check("25C", {"t", "C"}, true);
  check("1W", {"p", "W"}, true);
  check("1A", {"range", "*"}, true);
}

}  // namespace
}  // namespace knee
