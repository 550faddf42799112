// The spread report writers: CSV handed out in pieces as it is formatted.
#include "report_spread.h"

#include <gtest/gtest.h>

#include <string>
#include <vector>

namespace knee::cli {
namespace {

SpreadReport ManySamples(size_t rows) {
  SpreadReport r;
  r.first = 1;
  r.columns.push_back({0, -1, "R1", "Ohm", 99, 101, 100});
  SpreadQuantity q;
  q.name = "out.v";
  q.unit = "V";
  r.quantities.push_back(q);
  SpreadCheck c;
  c.name = "out.v <= 5 V";
  r.checks.push_back(c);
  r.rows.Assign(rows, 3, 0.0);
  for (size_t i = 0; i < rows; ++i) {
    r.rows[i][0] = 99.0 + 2.0 * static_cast<double>(i) / static_cast<double>(rows);
    r.rows[i][1] = 4.9 + 0.2 / 3.0 * static_cast<double>(i % 7);
    r.rows[i][2] = 5.0 - r.rows[i][1];
  }
  return r;
}

// Pieces of about 64 kB that join to the whole text, the header first.
TEST(SpreadCsv, PiecesJoinToTheWholeText) {
  const SpreadReport r = ManySamples(20000);
  const std::string whole = WriteSpreadCsv(r);
  std::vector<std::string> pieces;
  const std::string problem = WriteSpreadCsv(r, [&](std::string_view piece) {
    pieces.emplace_back(piece);
    return std::string();
  });
  EXPECT_EQ(problem, "");
  ASSERT_GT(pieces.size(), 3u);  // 20,000 rows are several pieces
  std::string joined;
  for (const std::string& p : pieces) {
    EXPECT_LE(p.size(), size_t{1} << 17);
    joined += p;
  }
  EXPECT_EQ(joined, whole);
  EXPECT_EQ(whole.rfind("sample,R1 [Ohm],out.v [V],pass(out.v <= 5 V)\n1,99,", 0), 0u)
      << whole.substr(0, 80);
}

// The first failed piece ends the writing and its message is returned.
TEST(SpreadCsv, StopsAtTheFirstFailedPiece) {
  const SpreadReport r = ManySamples(20000);
  int calls = 0;
  const std::string problem = WriteSpreadCsv(r, [&](std::string_view) {
    ++calls;
    return calls == 2 ? std::string("disk full") : std::string();
  });
  EXPECT_EQ(problem, "disk full");
  EXPECT_EQ(calls, 2);
}

TEST(SampleTable, RowsAreViewsOfOneArray) {
  SampleTable t;
  t.Assign(3, 2, -1.0);
  EXPECT_EQ(t.size(), 3u);
  EXPECT_EQ(t.width(), 2u);
  t[1][0] = 5.0;
  t[2][1] = 7.0;
  EXPECT_EQ(t.at(1, 0), 5.0);
  EXPECT_EQ(t.at(2, 1), 7.0);
  EXPECT_EQ(t.at(0, 0), -1.0);
  double sum = 0;
  size_t rows = 0;
  for (const auto& row : t) {
    ++rows;
    for (double v : row) sum += v;
  }
  EXPECT_EQ(rows, 3u);
  EXPECT_EQ(sum, 5.0 + 7.0 - 4.0);
}

}  // namespace
}  // namespace knee::cli
