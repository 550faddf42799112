// FormatDiagnostic(s) and SuggestName, as diagnostics.h documents them.
#include "knee/diagnostics.h"

#include <gtest/gtest.h>

#include "parser_test_util.h"

namespace knee {
namespace {

TEST(DiagnosticsTest, TheDocumentedLayout) {
  const std::string text = "part SIG diode\nvsource V pin -> 0 1\ndiode Dhi pin -> vdd SGI\n";
  const auto e = testing::AllErrors(text);
  ASSERT_EQ(e.size(), 1u);
  EXPECT_EQ(FormatDiagnostic(e[0], text),
            "t.knee:3:22: error: unknown part 'SGI'; expected the name of a 'part' statement\n"
            "    3 | diode Dhi pin -> vdd SGI\n"
            "      |                      ^~~\n"
            "hint: did you mean 'SIG'?\n"
            "note: t.knee:1:6: 'SIG' is defined here");
}

TEST(DiagnosticsTest, SeveralAndTheirCount) {
  const std::string text = "bias\nbias x\nwhat\n";
  const auto e = testing::ParseErrors(text);
  ASSERT_EQ(e.size(), 2u);
  const std::string all = FormatDiagnostics(e, text);
  EXPECT_EQ(all.substr(all.size() - 9), "2 errors\n");
  EXPECT_EQ(FormatDiagnostics({e[0]}, text), FormatDiagnostic(e[0], text) + "\n");
}

TEST(DiagnosticsTest, NoLineMeansNoQuote) {
  Diagnostic d;
  d.where.file = "--set";
  d.message = "something";
  EXPECT_EQ(FormatDiagnostic(d, "irrelevant"), "--set: error: something");
  // One prefix for every command-line error (issue 20, item 9).
  d.where.file = "";
  EXPECT_EQ(FormatDiagnostic(d, ""), "knee: error: something");
}

TEST(DiagnosticsTest, ControlCharactersShownAsQuestionMarks) {
  const std::string text = std::string("bias") + '\0' + "x\n";
  const auto e = testing::ParseErrors(text);
  ASSERT_EQ(e.size(), 1u);
  EXPECT_EQ(FormatDiagnostic(e[0], text),
            "t.knee:1:5: error: NUL byte in the text; a netlist is UTF-8 text\n"
            "    1 | bias?x\n"
            "      |     ^");
}

TEST(DiagnosticsTest, LongLinesAreShownAsAWindow) {
  const std::string text = "title \"" + std::string(500, 'a') + "\" x\n";
  const auto e = testing::ParseErrors(text);
  ASSERT_EQ(e.size(), 1u);
  const std::string shown = FormatDiagnostic(e[0], text);
  // The quote is cut to a window around the caret; the caret still lands under 'x'.
  const std::size_t quote = shown.find("\n    1 | ");
  const std::size_t caret_line = shown.find("\n      | ", quote + 1);
  ASSERT_NE(quote, std::string::npos);
  ASSERT_NE(caret_line, std::string::npos);
  const std::string quoted = shown.substr(quote + 9, caret_line - quote - 9);
  const std::size_t caret = shown.find('^', caret_line) - (caret_line + 9);
  EXPECT_LT(quoted.size(), 140u);
  EXPECT_EQ(quoted.substr(0, 3), "...");
  EXPECT_EQ(quoted[caret], 'x');
}

TEST(DiagnosticsTest, CaretUnderMultibyteText) {
  const std::string text = "title \"\xC2\xB5\xC2\xB5\" x\n";
  const auto e = testing::ParseErrors(text);
  ASSERT_EQ(e.size(), 1u);
  EXPECT_EQ(FormatDiagnostic(e[0], text),
            "t.knee:1:12: error: unexpected 'x' at the end of the title statement\n"
            "    1 | title \"\xC2\xB5\xC2\xB5\" x\n"
            "      |            ^");
}

TEST(DiagnosticsTest, SuggestName) {
  const std::vector<std::string> names = {"Rprot", "Rpin", "SIG", "Vline", "gnd"};
  EXPECT_EQ(SuggestName("Rprto", names), "Rprot");  // transposition
  EXPECT_EQ(SuggestName("SGI", names), "SIG");
  EXPECT_EQ(SuggestName("GND", names), "gnd");       // case only
  EXPECT_EQ(SuggestName("Rpn", names), "Rpin");      // deletion
  EXPECT_EQ(SuggestName("Vlines", names), "Vline");  // insertion
  EXPECT_EQ(SuggestName("xyz", names), "");          // nothing near
  EXPECT_EQ(SuggestName("Q", names), "");
  EXPECT_EQ(SuggestName("rpin", {"Rpin", "rpix"}), "Rpin");  // case-insensitive first
  EXPECT_EQ(SuggestName("anything", {}), "");
  // The distance is cut off once it exceeds the best so far: a nearer name after a farther
  // one still wins, ties go to the first listed, and ties on the folded distance go to the
  // smaller exact one.
  EXPECT_EQ(SuggestName("output", {"outpts", "outpat", "outpux"}), "outpat");
  EXPECT_EQ(SuggestName("outpu", {"outpa", "outpb"}), "outpa");
  EXPECT_EQ(SuggestName("vOUT", {"vout", "VOUT"}), "VOUT");
  EXPECT_EQ(SuggestName("abcdefghi", {"abcxyzghi", "abcdefgh"}), "abcdefgh");
}

// A netlist of thousands of dangling nodes: one hint each, from names compared without
// allocating (the check is that it finishes and hints at a neighbour, not its time).
TEST(DiagnosticsTest, SuggestNameAmongManyNames) {
  std::vector<std::string> names;
  for (int i = 0; i < 3000; ++i) names.push_back("n" + std::to_string(i));
  int hinted = 0;
  for (const std::string& n : names) hinted += !SuggestName(n, names).empty();
  EXPECT_EQ(hinted, 3000);
  EXPECT_EQ(SuggestName("n2999", names), "n299");  // one deletion, listed first
}

}  // namespace
}  // namespace knee
