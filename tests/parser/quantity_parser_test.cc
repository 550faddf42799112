// ParseQuantity: plain quantities, expressions of them, unit inference, errors.
#include <gtest/gtest.h>

#include <cmath>

#include "parser_test_util.h"

namespace knee {
namespace {

using testing::Brief;
using testing::MustBuild;

class QuantityTest : public ::testing::Test {
 protected:
  QuantityTest()
      : design_(MustBuild("part P diode\nvsource V a -> 0 5\nresistor R a -> k 1k\n"
                          "diode D k -> gnd P\n")) {}

  Result<QuantityExpr> Parse(const char* text) {
    return ParseQuantity(text, design_.circuit, SourceLocation{"q", 2, 5, 1});
  }
  std::string Error(const char* text) {
    Result<QuantityExpr> q = Parse(text);
    if (q.ok()) {
      ADD_FAILURE() << text << " parsed";
      return "";
    }
    return Brief(q.errors()[0]);
  }

  Design design_;
};

TEST_F(QuantityTest, PlainQuantities) {
  struct Case {
    const char* text;
    QuantityKind kind;
    int index;
    const char* unit;
  };
  const Case cases[] = {
      {"a.v", QuantityKind::kNodeVoltage, 1, "V"},
      {"gnd.v", QuantityKind::kNodeVoltage, 0, "V"},
      {"R.v", QuantityKind::kElementVoltage, 1, "V"},
      {"R.i", QuantityKind::kElementCurrent, 1, "A"},
      {"V.p", QuantityKind::kElementPower, 0, "W"},
      {"D.vj", QuantityKind::kJunctionVoltage, 2, "V"},
      {"D.rd", QuantityKind::kSmallSignalRes, 2, "Ohm"},
  };
  for (const Case& c : cases) {
    Result<QuantityExpr> q = Parse(c.text);
    ASSERT_TRUE(q.ok()) << c.text << ": " << q.errors()[0].message;
    EXPECT_EQ(q->text(), c.text);
    EXPECT_EQ(q->unit(), c.unit) << c.text;
    ASSERT_EQ(q->refs().size(), 1u);
    EXPECT_EQ(q->refs()[0].kind, c.kind) << c.text;
    EXPECT_EQ(q->refs()[0].index, c.index) << c.text;
  }
}

TEST_F(QuantityTest, ExpressionsEvaluateOnASolution) {
  Solution s;
  s.node_voltage = {0, 5, 0.7};
  s.element_voltage = {5, 4.3, 0.7};
  s.element_current = {-4.3e-3, 4.3e-3, 4.3e-3};
  s.junction_voltage = {NAN, NAN, 0.69};
  s.small_signal_res = {NAN, NAN, 6.0};
  Result<QuantityExpr> q = Parse("(a.v - k.v)");
  ASSERT_TRUE(q.ok());
  EXPECT_EQ(q->unit(), "V");  // V - V keeps V
  EXPECT_DOUBLE_EQ(q->Evaluate(s), 4.3);
  EXPECT_EQ(q->refs().size(), 2u);
  Result<QuantityExpr> r = Parse("(R.v / R.i)");
  ASSERT_TRUE(r.ok());
  EXPECT_EQ(r->unit(), "");  // a quotient's unit is not inferred
  EXPECT_DOUBLE_EQ(r->Evaluate(s), 1000.0);
  Result<QuantityExpr> t = Parse("(k.v + 0.1)");
  ASSERT_TRUE(t.ok());
  EXPECT_EQ(t->unit(), "V");  // a plain number takes the other term's unit
  EXPECT_DOUBLE_EQ(t->Evaluate(s), 0.8);
  Result<QuantityExpr> m = Parse("(a.v + R.i)");
  ASSERT_TRUE(m.ok());
  EXPECT_EQ(m->unit(), "");  // V + A: mixed
  Result<QuantityExpr> f = Parse("(1000 * abs(V.i) + max(D.vj, D.rd))");
  ASSERT_TRUE(f.ok());
  EXPECT_DOUBLE_EQ(f->Evaluate(s), 4.3 + 6.0);
  Result<QuantityExpr> dup = Parse("(a.v * a.v)");
  ASSERT_TRUE(dup.ok());
  EXPECT_EQ(dup->refs().size(), 1u);  // each quantity listed once
}

TEST_F(QuantityTest, Errors) {
  EXPECT_EQ(Error("b.v"), "2:5: unknown node or element 'b' in the quantity 'b.v'");
  EXPECT_EQ(Parse("R1.i").errors()[0].hint, "did you mean 'R'?");
  EXPECT_EQ(Error("a.i"), "2:5: 'a' is a node; a node has only .v (its voltage)");
  EXPECT_EQ(Error("R.vj"), "2:5: 'R' is a resistor; .vj, .rd and .tj exist for diodes only");
  EXPECT_EQ(Error("R.x"), "2:5: unknown quantity '.x' of resistor 'R'; expected .v, .i, .p");
  EXPECT_EQ(Error("a"),
            "2:5: 'a' is not a quantity, a param or temp; expected NODE.v, ELEMENT.v, "
            "ELEMENT.i, ELEMENT.p, DIODE.vj, DIODE.rd, DIODE.tj or HEATSINK.t");
  EXPECT_EQ(Parse("a").errors()[0].hint, "did you mean 'a.v'?");  // 'a' is a node
  EXPECT_EQ(Error("(a.v - b.v)"), "2:12: unknown node or element 'b' in the quantity 'b.v'");
  EXPECT_EQ(Error("a.v - k.v"), "2:5: an expression of quantities must be written in parentheses");
  EXPECT_EQ(Error("(a.v"), "2:5: unclosed '('; expected ')' before the end of the line");
  EXPECT_EQ(Error(""), "2:5: expected a quantity (such as pin.v or R1.i) but found nothing");
}

TEST(QuantityInFileTest, ShowErrorsPointIntoTheFile) {
  const auto e = testing::AllErrors("vsource V a -> 0 1\nshow a.v (a.v - pn.v)\n");
  EXPECT_EQ(testing::OnlyError(e), "2:17: unknown node or element 'pn' in the quantity 'pn.v'");
}

}  // namespace
}  // namespace knee
