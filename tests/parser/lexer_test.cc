// The scanner and line reader on text that is not a well-formed netlist: NUL bytes,
// invalid UTF-8, binary garbage, overlong lines, deep nesting, huge files.
#include "lexer.h"

#include <gtest/gtest.h>

#include <random>

#include "parser_test_util.h"

namespace knee {
namespace {

using testing::MustBuild;
using testing::OnlyError;
using testing::ParseErrors;

TEST(LexerTest, WordModeSplitsArrowEqualsAndParentheses) {
  LogicalLine line = SyntheticLine("a->b x=1 (y) \"s t\"", Span{1, 1, 1});
  Scanner s(line);
  std::vector<std::pair<Tok, std::string>> got;
  for (Token t = s.NextWord(); t.kind != Tok::kEnd; t = s.NextWord()) {
    got.emplace_back(t.kind, std::string(t.text));
  }
  const std::vector<std::pair<Tok, std::string>> want = {
      {Tok::kWord, "a"},   {Tok::kArrow, "->"},  {Tok::kWord, "b"},   {Tok::kWord, "x"},
      {Tok::kEquals, "="}, {Tok::kWord, "1"},    {Tok::kLParen, "("}, {Tok::kWord, "y"},
      {Tok::kRParen, ")"}, {Tok::kString, "s t"}};
  EXPECT_EQ(got, want);
}

TEST(LexerTest, ExpressionModeTokens) {
  LogicalLine line = SyntheticLine("2*4k7+1e-3/pin.v^x,", Span{1, 1, 1});
  Scanner s(line);
  std::vector<std::string> got;
  for (Token t = s.NextExpr(); t.kind != Tok::kEnd; t = s.NextExpr()) {
    got.emplace_back(t.text);
  }
  EXPECT_EQ(got,
            (std::vector<std::string>{"2", "*", "4k7", "+", "1e-3", "/", "pin.v", "^", "x", ","}));
}

TEST(LexerTest, ColumnsCountCharactersNotBytes) {
  // 'µ' is two bytes but one column: the fault after it is at column 21.
  EXPECT_EQ(OnlyError(ParseErrors("isource I a -> 0 1\xC2\xB5x\n")),
            "1:20: malformed number '1\xC2\xB5x': 'x' after '1\xC2\xB5' is not a unit");
}

TEST(LexerTest, NulByte) {
  const std::string text = std::string("vsource V a -> 0 1\nresistor R a") + '\0' + " -> 0 1\n";
  EXPECT_EQ(OnlyError(ParseErrors(text)), "2:13: NUL byte in the text; a netlist is UTF-8 text");
}

TEST(LexerTest, InvalidUtf8) {
  EXPECT_EQ(OnlyError(ParseErrors("title \"caf\xE9\"\n")),
            "1:11: invalid UTF-8 byte 0xE9; a netlist must be UTF-8 text");
  // An overlong encoding of '/' and a lone continuation byte are invalid too (RFC 3629).
  EXPECT_EQ(OnlyError(ParseErrors("# \xC0\xAF\n")),
            "1:3: invalid UTF-8 byte 0xC0; a netlist must be UTF-8 text");
  EXPECT_EQ(OnlyError(ParseErrors("bias \x80\n")),
            "1:6: invalid UTF-8 byte 0x80; a netlist must be UTF-8 text");
}

TEST(LexerTest, ControlCharacter) {
  EXPECT_EQ(OnlyError(ParseErrors("bias\x1B[0m\n")),
            "1:5: control character 0x1B in the text; a netlist is plain text");
}

TEST(LexerTest, NonAsciiOutsideStringsIsAnError) {
  EXPECT_EQ(OnlyError(ParseErrors("param x = (2 \xC3\xBC 3)\n")),
            "1:14: unexpected character '\xC3\xBC' in an expression");
}

TEST(LexerTest, OverlongLine) {
  std::string text = "title \"" + std::string(20000, 'a') + "\"\nbias\n";
  EXPECT_EQ(OnlyError(ParseErrors(text)),
            "1:10001: line is too long (20008 bytes); the limit is 10000 bytes");
  // Exactly at the limit is fine.
  std::string fits = "title \"" + std::string(kMaxLineBytes - 8, 'a') + "\"";
  EXPECT_EQ(fits.size(), kMaxLineBytes);
  EXPECT_TRUE(ParseErrors(fits).empty());
}

TEST(LexerTest, BinaryGarbageNeverCrashes) {
  std::mt19937 random(12345);
  for (int round = 0; round < 200; ++round) {
    std::string text(static_cast<std::size_t>(random() % 4000), '\0');
    for (char& c : text) c = static_cast<char>(random() & 0xFF);
    Result<Netlist> r = ParseNetlist(text, "garbage.bin");
    if (r.ok()) continue;  // possible, if rarely: then it must elaborate or fail cleanly
    ASSERT_FALSE(r.errors().empty());
    ASSERT_LE(r.errors().size(), static_cast<std::size_t>(kMaxDiagnostics));
    for (const Diagnostic& d : r.errors()) {
      EXPECT_EQ(d.where.file, "garbage.bin");
      EXPECT_GE(d.where.line, 1);
      EXPECT_GE(d.where.column, 1);
      EXPECT_FALSE(d.message.empty());
    }
    const std::string shown = FormatDiagnostics(r.errors(), text);
    EXPECT_FALSE(shown.empty());
  }
}

TEST(LexerTest, PrintableGarbageNeverCrashes) {
  std::mt19937 random(777);
  const std::string alphabet = "abcRVD01239.e-+*/^()=\"#\\ ,:k>\n\t_";
  for (int round = 0; round < 2000; ++round) {
    std::string text;
    const std::size_t n = random() % 200;
    for (std::size_t i = 0; i < n; ++i) text += alphabet[random() % alphabet.size()];
    Result<Netlist> r = ParseNetlist(text, "t.knee");
    if (r.ok()) {
      Result<Design> d = Elaborate(*r, {});
      if (!d.ok()) {
        EXPECT_FALSE(d.errors().empty());
      }
    } else {
      EXPECT_FALSE(r.errors().empty());
    }
  }
}

TEST(LexerTest, DeepNestingIsAnErrorNotAStackOverflow) {
  const std::string text = "param x = " + std::string(5000, '(') + "1\n";
  EXPECT_EQ(OnlyError(ParseErrors(text)),
            "1:211: expression nested too deeply; the limit is 200 levels");
  // 100,000 '(' in a file exceed the line length limit first ...
  EXPECT_EQ(OnlyError(ParseErrors("param x = " + std::string(100000, '(') + "1\n")),
            "1:10001: line is too long (100011 bytes); the limit is 10000 bytes");
  // ... and given on the command line (no line limit there) hit the nesting limit.
  Circuit empty;
  Result<QuantityExpr> q =
      ParseQuantity(std::string(100000, '(') + "gnd.v", empty, SourceLocation{"--show", 0, 0, 1});
  ASSERT_FALSE(q.ok());
  EXPECT_EQ(q.errors()[0].message, "expression nested too deeply; the limit is 200 levels");
  EXPECT_EQ(q.errors()[0].where.file, "--show");
  // The same inside a value place, where the first '(' opens the expression.
  const std::string value = "resistor R a -> 0 " + std::string(5000, '(') + "1\n";
  EXPECT_EQ(ParseErrors(value).size(), 1u);
  const std::string minus = "param x = " + std::string(5000, '-') + "1\n";
  EXPECT_EQ(ParseErrors(minus).size(), 1u);
  const std::string chain = "param x = 1" + [] {
    std::string s;
    for (int i = 0; i < 3000; ++i) s += "+1";
    return s;
  }() + "\n";
  EXPECT_EQ(ParseErrors(chain).size(), 1u);
}

TEST(LexerTest, NestingWithinTheLimitWorks) {
  const std::string text =
      "param x = " + std::string(150, '(') + "2" + std::string(150, ')') + "\nvsource V a -> 0 x\n";
  const Design d = MustBuild(text);
  EXPECT_EQ(d.circuit.elements[0].value, 2.0);
}

TEST(LexerTest, ByteOrderMarkIsIgnored) {
  const Design d = MustBuild("\xEF\xBB\xBFvsource V a -> 0 1\n");
  EXPECT_EQ(d.circuit.elements.size(), 1u);
}

TEST(LexerTest, StrayBackslash) {
  EXPECT_EQ(OnlyError(ParseErrors("resistor R\\x a -> 0 1\n")),
            "1:10: expected a resistor name but found 'R\\x'; a name is a letter or '_' "
            "followed by letters, digits or '_'");
}

TEST(LexerTest, ContinuationAtEndOfFile) {
  const Design d = MustBuild("vsource V a -> 0 \\\n1");
  EXPECT_EQ(d.circuit.elements[0].value, 1.0);
}

// A million elements parse and elaborate, every one of them and every node kept. (How
// fast, and that the time grows linearly with the file, is measured in bench/: the
// 1e6 ladder and the scaling exponent of bench/run. Tests assert no times.)
TEST(LexerTest, MillionElements) {
  std::string text = "vsource V n0 -> gnd 1\n";
  const int count = 1000000;
  text.reserve(static_cast<std::size_t>(count) * 32);
  for (int i = 0; i < count; ++i) {
    text += "resistor R" + std::to_string(i) + " n" + std::to_string(i) + " -> n" +
            std::to_string(i + 1) + " 1k\n";
  }
  Result<Netlist> r = ParseNetlist(text, "big.knee");
  ASSERT_TRUE(r.ok());
  Result<Circuit> c = ElaborateCircuit(*r, {});
  ASSERT_TRUE(c.ok());
  EXPECT_EQ(c->elements.size(), static_cast<std::size_t>(count) + 1);
  EXPECT_EQ(c->nodes.size(), static_cast<std::size_t>(count) + 2);
  EXPECT_EQ(c->elements.back().name, "R999999");
  EXPECT_EQ(c->nodes.back(), "n1000000");
}

}  // namespace
}  // namespace knee
