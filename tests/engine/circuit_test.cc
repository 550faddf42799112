// Name lookups of the circuit and the reported quantities.
#include <gtest/gtest.h>

#include "circuit_builder.h"
#include "knee/quantity.h"

namespace knee {
namespace {

TEST(Circuit, FindsByName) {
  testing::CircuitBuilder b;
  DiodeModel m;
  const int part = b.Part("SIG", m);
  b.V("V1", "in", "gnd", 1.0);
  b.D("D1", "in", "out", part);
  const Circuit& c = b.circuit();
  EXPECT_EQ(c.FindNode("gnd"), kGroundNode);
  EXPECT_EQ(c.FindNode("0"), kGroundNode);
  EXPECT_EQ(c.FindNode("out"), 2);
  EXPECT_EQ(c.FindNode("nope"), -1);
  EXPECT_EQ(c.FindElement("D1"), 1);
  EXPECT_EQ(c.FindElement("d1"), -1);  // names are case-sensitive
  EXPECT_EQ(c.FindPart("SIG"), 0);
  EXPECT_STREQ(ElementKindName(ElementKind::kCurrentSource), "isource");
  EXPECT_STREQ(ElementKindName(ElementKind::kDiode), "diode");
}

// An element's own temperature reads as an optional (OwnTemp keeps none as NaN).
TEST(Circuit, ElementTempIsNoneUntilSet) {
  Element e;
  EXPECT_FALSE(e.temp.has_value());
  EXPECT_FALSE(static_cast<bool>(e.temp));
  EXPECT_TRUE(e.temp == OwnTemp());
  EXPECT_FALSE(e.temp == 0.0);
  e.temp = -40.0;
  EXPECT_TRUE(e.temp.has_value());
  EXPECT_EQ(*e.temp, -40.0);
  EXPECT_TRUE(e.temp == -40.0);
  EXPECT_FALSE(e.temp == OwnTemp());
  Circuit c;
  c.temp = 25.0;
  EXPECT_EQ(c.DeviceTemp(e), -40.0);
  e.temp = std::nullopt;
  EXPECT_EQ(c.DeviceTemp(e), 25.0);
}

// An element's place keeps what a SourceLocation says, columns and lengths beyond 16 bits
// clamped (no netlist line is that long).
TEST(Circuit, ElementLocationReadsAsASourceLocation) {
  Element e;
  e.where = SourceLocation{"a.knee", 12, 345, 6};
  const SourceLocation back = e.where;
  EXPECT_EQ(back.file, "a.knee");
  EXPECT_EQ(back.line, 12);
  EXPECT_EQ(back.column, 345);
  EXPECT_EQ(back.length, 6);
  e.where = SourceLocation{"a.knee", 1, 70000, 70000};
  EXPECT_EQ(e.where.column, 65535);
  EXPECT_EQ(e.where.length, 65535);
}

TEST(Quantity, EvaluatesAndNames) {
  testing::CircuitBuilder b;
  b.V("V1", "in", "gnd", 2.0);
  b.R("R1", "in", "gnd", 4.0);
  Solution s;
  s.node_voltage = {0.0, 2.0};
  s.element_voltage = {2.0, 2.0};
  s.element_current = {-0.5, 0.5};
  s.junction_voltage = {0.0, 0.0};
  s.small_signal_res = {0.0, 0.0};
  EXPECT_EQ(Evaluate(s, {QuantityKind::kNodeVoltage, 1}), 2.0);
  EXPECT_EQ(Evaluate(s, {QuantityKind::kElementPower, 1}), 1.0);   // absorbed
  EXPECT_EQ(Evaluate(s, {QuantityKind::kElementPower, 0}), -1.0);  // delivered
  EXPECT_EQ(QuantityName(b.circuit(), {QuantityKind::kNodeVoltage, 1}), "in.v");
  EXPECT_EQ(QuantityName(b.circuit(), {QuantityKind::kElementCurrent, 1}), "R1.i");
  EXPECT_EQ(QuantityName(b.circuit(), {QuantityKind::kSmallSignalRes, 0}), "V1.rd");
  EXPECT_STREQ(UnitSymbol(QuantityKind::kElementPower), "W");
  EXPECT_STREQ(UnitSymbol(QuantityKind::kSmallSignalRes), "Ohm");
}

}  // namespace
}  // namespace knee
