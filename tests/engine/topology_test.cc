// CheckTopology: every kind of structural problem is found and named; healthy circuits
// pass.
#include <gtest/gtest.h>

#include "circuit_builder.h"
#include "knee/solver.h"

namespace knee {
namespace {

using testing::CircuitBuilder;

bool Mentions(const Diagnostic& d, const std::string& text) {
  return d.message.find(text) != std::string::npos;
}

TEST(Topology, HealthyCircuitsHaveNoProblems) {
  CircuitBuilder b;
  DiodeModel m;
  const int part = b.Part("P", m);
  b.V("V1", "in", "gnd", 5);
  b.R("R1", "in", "a", 1e3);
  b.D("D1", "a", "gnd", part);
  b.I("I1", "a", "b", 1e-3);
  b.R("R2", "b", "0", 1e3);
  EXPECT_TRUE(CheckTopology(b.circuit()).empty());
}

TEST(Topology, EmptyCircuit) {
  const auto problems = CheckTopology(Circuit{});
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_TRUE(Mentions(problems[0], "no elements"));
}

TEST(Topology, ElementWithBothEndsOnOneNode) {
  CircuitBuilder b;
  b.V("V1", "a", "gnd", 1);
  b.R("R1", "a", "gnd", 1);
  const int r = b.R("Rshort", "a", "a", 1);
  const auto problems = CheckTopology(b.circuit());
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_TRUE(Mentions(problems[0], "'Rshort'"));
  EXPECT_TRUE(Mentions(problems[0], "node 'a'"));
  EXPECT_EQ(problems[0].where.line, b.circuit().elements[static_cast<size_t>(r)].where.line);
}

TEST(Topology, FloatingSubnetwork) {
  CircuitBuilder b;
  b.V("V1", "a", "gnd", 1);
  b.R("R1", "a", "gnd", 1);
  b.R("R2", "x", "y", 1);
  b.R("R3", "y", "z", 1);
  const auto problems = CheckTopology(b.circuit());
  ASSERT_EQ(problems.size(), 1u);
  const Diagnostic& d = problems[0];
  EXPECT_TRUE(Mentions(d, "nodes 'x', 'y' and 'z'")) << d.message;
  EXPECT_TRUE(Mentions(d, "no DC path to gnd")) << d.message;
  EXPECT_TRUE(Mentions(d, "'R2' and 'R3'")) << d.message;
  EXPECT_EQ(d.where.line, 3);     // R2, the first element involved
  ASSERT_EQ(d.notes.size(), 1u);  // R3
  EXPECT_EQ(d.notes[0].first.line, 4);
}

TEST(Topology, LoopOfVoltageSources) {
  CircuitBuilder b;
  b.V("V1", "a", "gnd", 1);
  b.R("R1", "a", "b", 1);
  b.V("V2", "a", "c", 1);
  b.V("V3", "c", "gnd", 1);  // V1, V2, V3 form a loop
  b.R("R2", "c", "gnd", 1);
  const auto problems = CheckTopology(b.circuit());
  ASSERT_EQ(problems.size(), 1u);
  const Diagnostic& d = problems[0];
  EXPECT_TRUE(Mentions(d, "loop")) << d.message;
  EXPECT_TRUE(Mentions(d, "'V1', 'V2' and 'V3'")) << d.message;
  EXPECT_EQ(d.where.line, 1);
  EXPECT_EQ(d.notes.size(), 2u);
}

TEST(Topology, ParallelVoltageSourcesAreALoop) {
  CircuitBuilder b;
  b.V("V1", "a", "gnd", 1);
  b.V("V2", "a", "gnd", 1);
  b.R("R1", "a", "gnd", 1);
  const auto problems = CheckTopology(b.circuit());
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_TRUE(Mentions(problems[0], "'V1' and 'V2'")) << problems[0].message;
}

TEST(Topology, CutSetOfCurrentSources) {
  CircuitBuilder b;
  b.V("V1", "a", "gnd", 1);
  b.R("R1", "a", "gnd", 1);
  b.I("I1", "a", "m", 1e-3);
  b.R("R2", "m", "k", 1);
  b.I("I2", "k", "gnd", 1e-3);
  const auto problems = CheckTopology(b.circuit());
  ASSERT_EQ(problems.size(), 1u);
  const Diagnostic& d = problems[0];
  EXPECT_TRUE(Mentions(d, "'I1' and 'I2'")) << d.message;
  EXPECT_TRUE(Mentions(d, "cut set")) << d.message;
  EXPECT_TRUE(Mentions(d, "nodes 'm' and 'k'")) << d.message;
  EXPECT_EQ(d.where.line, 3);
  ASSERT_EQ(d.notes.size(), 1u);
  EXPECT_EQ(d.notes[0].first.line, 5);
}

// A diode gives a DC path (it conducts in both directions, however little in reverse);
// a current source does not.
TEST(Topology, DiodesGiveADcPathCurrentSourcesDoNot) {
  CircuitBuilder b;
  DiodeModel m;
  const int part = b.Part("P", m);
  b.I("I1", "gnd", "a", 1e-3);
  b.D("D1", "a", "gnd", part);
  EXPECT_TRUE(CheckTopology(b.circuit()).empty());
  CircuitBuilder c;
  c.I("I1", "gnd", "a", 1e-3);
  c.R("R1", "a", "b", 1);
  const auto problems = CheckTopology(c.circuit());
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_TRUE(Mentions(problems[0], "'I1'")) << problems[0].message;
}

}  // namespace
}  // namespace knee
