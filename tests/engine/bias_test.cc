// Linear circuits against closed forms, through the full BiasSolver.
#include <gtest/gtest.h>

#include "circuit_builder.h"
#include "knee/solver.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::CircuitBuilder;

SolveSummary SolveOk(const Circuit& c, Solution* s, const SolverOptions& o = {}) {
  EXPECT_TRUE(CheckTopology(c).empty());
  auto solver = BiasSolver::Create(c, o);
  EXPECT_TRUE(solver.ok());
  if (!solver.ok()) return {};
  SolveSummary summary = (*solver)->Solve(s);
  EXPECT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  return summary;
}

// Voltage divider: v = V * R2 / (R1 + R2) (Ohm's law and KCL, closed form).
TEST(BiasLinear, Divider) {
  CircuitBuilder b;
  b.V("V1", "in", "gnd", 10.0);
  const int r1 = b.R("R1", "in", "mid", 3e3);
  b.R("R2", "mid", "0", 1e3);
  Solution s;
  SolveOk(b.circuit(), &s);
  EXPECT_CLOSE(s.node_voltage[b.Node("mid")], 10.0 * 1e3 / 4e3, 1e-12, 0.0);
  EXPECT_CLOSE(s.element_current[r1], 10.0 / 4e3, 1e-12, 0.0);
  // The source delivers power: its current (P -> N through the source) is negative.
  EXPECT_CLOSE(s.element_current[0], -10.0 / 4e3, 1e-12, 0.0);
}

}  // namespace
}  // namespace knee
