// The adjoint sensitivities of BiasSolver::Sensitivity against central finite
// differences with Richardson extrapolation (common practice, no source: the check of
// analytic derivatives that style.md asks for), on hand-built circuits that reach every
// device derivative: resistors and both sources, diodes with series resistance,
// breakdown, their own temperature, an area, and an island (nodes tied to gnd only
// through junctions).
#include "knee/sensitivity.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <memory>
#include <vector>

#include "circuit_builder.h"
#include "finite_difference.h"
#include "knee/quantity.h"
#include "knee/solver.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::CircuitBuilder;

// Tight tolerances: the finite differences need solutions to near double precision.
SolverOptions Tight() {
  SolverOptions o;
  o.abs_voltage_tol = 1e-15;
  o.abs_current_tol = 1e-21;
  o.rel_tol = 1e-14;
  return o;
}

double SolveFor(const Circuit& c, const QuantityRef& q) {
  auto solver = BiasSolver::Create(c, Tight());
  EXPECT_TRUE(solver.ok());
  Solution s;
  const SolveSummary summary = (*solver)->Solve(&s);
  EXPECT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  return Evaluate(s, q);
}

// Ridders' table from a step of 1 % of the value (1e-2 in the target's unit at 0).
testing::FiniteDifference FiniteDifferenceOf(const Circuit& c, const SensitivityTarget& t,
                                             const QuantityRef& q) {
  const double p = TargetValue(c, t);
  const auto at = [&](double value) {
    Circuit moved = c;
    SetTargetValue(&moved, t, value);
    return SolveFor(moved, q);
  };
  return testing::RiddersDerivative(at, p, 1e-2 * (p != 0.0 ? std::fabs(p) : 1.0));
}

void CheckAll(const Circuit& c, const std::vector<QuantityRef>& quantities) {
  auto solver = BiasSolver::Create(c, SolverOptions{});
  ASSERT_TRUE(solver.ok());
  Solution s;
  ASSERT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
  const std::vector<SensitivityTarget> targets = SensitivityTargets(c);
  for (const QuantityRef& q : quantities) {
    const WeightedQuantity w{q, 1.0};
    CircuitGradient g;
    ASSERT_TRUE((*solver)->Sensitivity({&w, 1}, &g).ok());
    for (const SensitivityTarget& t : targets) {
      const testing::FiniteDifference fd = FiniteDifferenceOf(c, t, q);
      // 1e-6 relative or 1e-12 absolute, unless the differences themselves are noisier
      // than that (a derivative that vanishes next to the solution's rounding): then to
      // the table's own error estimate, which must stay below 1e-8 absolute (the
      // differences of solutions converged to the solver's tolerance, not the adjoint).
      EXPECT_LE(fd.error, 1e-8 + 1e-6 * std::fabs(fd.derivative));
      EXPECT_CLOSE(g.At(t), fd.derivative, 1e-6, std::max(1e-12, 4.0 * fd.error))
          << "d " << QuantityName(c, q) << " / d " << TargetName(c, t);
    }
  }
}

TEST(Sensitivity, DividerAgainstFiniteDifferences) {
  CircuitBuilder b;
  b.V("V1", "in", "gnd", 5.0);
  b.R("R1", "in", "out", 1e3);
  b.R("R2", "out", "gnd", 2.2e3);
  b.I("I1", "gnd", "out", 1e-3);
  const Circuit& c = b.circuit();
  CheckAll(c, {{QuantityKind::kNodeVoltage, c.FindNode("out")},
               {QuantityKind::kElementCurrent, 0},
               {QuantityKind::kElementCurrent, 1},
               {QuantityKind::kElementCurrent, 3},
               {QuantityKind::kElementPower, 0},
               {QuantityKind::kElementPower, 3}});
}

TEST(Sensitivity, DiodesWithEveryKeyAgainstFiniteDifferences) {
  CircuitBuilder b(40.0);
  DiodeModel m;
  m.sat_current = 2e-12;
  m.ideality = 1.3;
  m.series_res = 2.0;
  m.breakdown_v = 6.2;
  m.breakdown_i = 1e-3;
  m.breakdown_ideality = 1.2;
  m.breakdown_tc = 4e-4;
  m.bandgap = 1.12;
  m.sat_temp_exp = 3.0;
  m.ref_temp = 27.0;
  const int part = b.Part("Z", m);
  b.V("V1", "in", "gnd", 12.0);
  b.R("R1", "in", "z", 470.0);
  b.D("DZ", "gnd", "z", part, 1.5);  // in breakdown
  b.D("DF", "z", "f", part);         // forward
  b.R("R2", "f", "gnd", 2.2e3);
  Circuit c = b.circuit();
  c.elements[static_cast<size_t>(c.FindElement("DF"))].temp = 60.0;  // its own temperature
  const int dz = c.FindElement("DZ"), df = c.FindElement("DF");
  CheckAll(c, {{QuantityKind::kNodeVoltage, c.FindNode("z")},
               {QuantityKind::kElementCurrent, dz},
               {QuantityKind::kElementCurrent, df},
               {QuantityKind::kJunctionVoltage, dz},
               {QuantityKind::kJunctionVoltage, df},
               {QuantityKind::kSmallSignalRes, dz},
               {QuantityKind::kSmallSignalRes, df},
               {QuantityKind::kElementPower, dz}});
}

// A bridge floats on its junctions: the dc side is an island of the solver's
// coordinates, so the adjoint vector lives in them too.
TEST(Sensitivity, IslandAgainstFiniteDifferences) {
  CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-9;
  m.ideality = 1.7;
  m.series_res = 0.1;
  const int part = b.Part("B", m);
  b.V("V1", "a", "bb", 10.0);
  b.R("Rref", "bb", "gnd", 1e6);
  b.D("D1", "a", "out", part);
  b.D("D2", "bb", "out", part);
  b.D("D3", "ret", "a", part);
  b.D("D4", "ret", "bb", part);
  b.R("Rload", "out", "ret", 47.0);
  b.R("Rgnd", "ret", "gnd", 1e6);
  const Circuit& c = b.circuit();
  CheckAll(c, {{QuantityKind::kNodeVoltage, c.FindNode("out")},
               {QuantityKind::kElementVoltage, c.FindElement("Rload")},
               {QuantityKind::kElementCurrent, c.FindElement("D3")},
               {QuantityKind::kElementCurrent, c.FindElement("V1")}});
}

TEST(Sensitivity, RefusedWithoutAConvergedSolve) {
  CircuitBuilder b;
  b.V("V1", "in", "gnd", 1.0);
  b.R("R1", "in", "gnd", 1.0);
  auto solver = BiasSolver::Create(b.circuit(), SolverOptions{});
  ASSERT_TRUE(solver.ok());
  const WeightedQuantity w{{QuantityKind::kNodeVoltage, 1}, 1.0};
  CircuitGradient g;
  EXPECT_FALSE((*solver)->Sensitivity({&w, 1}, &g).ok());
  Solution s;
  ASSERT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
  EXPECT_TRUE((*solver)->Sensitivity({&w, 1}, &g).ok());
  (*solver)->UpdateValues(b.circuit());  // new values: the old point is no solution of them
  EXPECT_FALSE((*solver)->Sensitivity({&w, 1}, &g).ok());
}

}  // namespace
}  // namespace knee
