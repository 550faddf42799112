// Self-heating in the engine (engine/src/thermal.cc, docs/thermal.md): which diodes are
// heated, the warm start of the thermal unknowns, --isothermal, and the runaway fold.
// The numbers against outside references are in tests/reference/thermal_scipy_check.py.
#include "thermal.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "circuit_builder.h"
#include "knee/solver.h"

namespace knee {
namespace {

DiodeModel Rectifier(std::optional<double> thermal_res) {
  DiodeModel m;
  m.sat_current = 10e-9;
  m.ideality = 1.75;
  m.series_res = 0.05;
  m.thermal_res = thermal_res;
  return m;
}

TEST(Thermal, WhichDiodesAreHeated) {
  testing::CircuitBuilder b;
  const int hot = b.Part("hot", Rectifier(40.0));
  const int cold = b.Part("cold", Rectifier(std::nullopt));
  b.I("I1", "gnd", "a", 1.0);
  b.D("D1", "a", "gnd", hot);   // heated, junction to ambient
  b.D("D2", "a", "gnd", hot);   // its temp= excludes it
  b.D("D3", "a", "gnd", cold);  // no thermal_res, no sink: at the ambient
  b.D("D4", "a", "gnd", cold);  // on a sink without thermal_res: at the sink's temperature
  Circuit& c = b.circuit();
  c.elements[2].temp = 60.0;
  c.heatsinks.push_back({"HS", 5.0, {}});
  c.sink_mounts.push_back({4, 0});
  const std::vector<internal::HeatedDiode> heated = internal::HeatedDiodes(c);
  ASSERT_EQ(heated.size(), 2u);
  EXPECT_EQ(heated[0].element, 1);
  EXPECT_EQ(heated[0].sink, -1);
  EXPECT_EQ(heated[0].thermal_res, 40.0);
  EXPECT_EQ(heated[1].element, 4);
  EXPECT_EQ(heated[1].sink, 0);
  EXPECT_EQ(heated[1].thermal_res, 0.0);
  EXPECT_FALSE(c.SelfHeated(0));  // a current source
  EXPECT_FALSE(c.SelfHeated(2));
  EXPECT_FALSE(c.SelfHeated(3));
}

TEST(Thermal, BalanceHoldsAndWarmStartCarriesTheTemperatures) {
  testing::CircuitBuilder b;
  b.I("I1", "gnd", "a", 0.7);
  b.D("D1", "a", "gnd", b.Part("hot", Rectifier(55.0)));
  const Circuit& c = b.circuit();
  auto solver = BiasSolver::Create(c, SolverOptions{});
  ASSERT_TRUE(solver.ok());
  Solution s;
  const SolveSummary first = (*solver)->Solve(&s);
  ASSERT_EQ(first.status, SolveStatus::kConverged) << first.detail;
  EXPECT_TRUE(first.heated);
  EXPECT_FALSE(first.unique);
  // The contract's balance, Tj = Ta + thermal_res * v * i, to the reported residual.
  const double tj = s.junction_temp[1];
  const double p = s.element_voltage[1] * s.element_current[1];
  EXPECT_NEAR(tj, 25.0 + 55.0 * p, 1e-9);
  EXPECT_LE(std::fabs(tj - 25.0 - 55.0 * p), first.max_thermal_residual + 1e-12);
  EXPECT_GT(tj, 50.0);
  // The unknowns end with the junction temperature; from them one iteration suffices.
  ASSERT_EQ((*solver)->unknown_count(), 2);
  const std::vector<double> start((*solver)->unknowns().begin(), (*solver)->unknowns().end());
  ASSERT_EQ(start.size(), 2u);
  EXPECT_EQ(start[1], tj);
  Solution again;
  const SolveSummary warm = (*solver)->Solve(&again, start);
  ASSERT_EQ(warm.status, SolveStatus::kConverged);
  EXPECT_EQ(warm.thermal_iterations, 1);
  EXPECT_NEAR(again.junction_temp[1], tj, 1e-12 * (tj + 273.15));
}

TEST(Thermal, IsothermalIsTheCircuitWithoutThermalRes) {
  const auto solve = [](std::optional<double> thermal_res, bool isothermal) {
    testing::CircuitBuilder b;
    b.V("V1", "in", "gnd", 5.0);
    b.R("R1", "in", "a", 10.0);
    b.D("D1", "a", "gnd", b.Part("p", Rectifier(thermal_res)));
    SolverOptions o;
    o.isothermal = isothermal;
    auto solver = BiasSolver::Create(b.circuit(), o);
    Solution s;
    EXPECT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
    return s.node_voltage;
  };
  const std::vector<double> plain = solve(std::nullopt, false);
  EXPECT_EQ(solve(80.0, true), plain);  // bit for bit
  EXPECT_NE(solve(80.0, false), plain);
}

// A leaky junction reverse-biased across a source: runaway above a critical thermal_res,
// a balance just below it.
TEST(Thermal, RunawayReportsTheFoldItsCriticalValueSolvesBelow) {
  const auto solve = [](double thermal_res) {
    testing::CircuitBuilder b;
    DiodeModel m;
    m.sat_current = 1e-3;
    m.ideality = 1.05;
    m.bandgap = 0.69;
    m.thermal_res = thermal_res;
    b.V("V1", "k", "gnd", 40.0);
    b.D("D1", "gnd", "k", b.Part("leaky", m));
    auto solver = BiasSolver::Create(b.circuit(), SolverOptions{});
    Solution s;
    return (*solver)->Solve(&s);
  };
  const SolveSummary hot = solve(150.0);
  ASSERT_EQ(hot.status, SolveStatus::kThermalRunaway) << hot.detail;
  EXPECT_EQ(hot.thermal_worst, "D1");
  ASSERT_TRUE(std::isfinite(hot.critical_thermal_res));
  EXPECT_GT(hot.runaway_temp, 25.0);
  EXPECT_TRUE(solve(0.999 * hot.critical_thermal_res).status == SolveStatus::kConverged);
  EXPECT_EQ(solve(1.001 * hot.critical_thermal_res).status, SolveStatus::kThermalRunaway);
  // Well below, plain Newton needs no continuation.
  const SolveSummary cool = solve(40.0);
  ASSERT_EQ(cool.status, SolveStatus::kConverged);
  EXPECT_TRUE(cool.aids.empty());
}

// A forward diode driven from 1 V through 0.2 Ohm on 350 K/W: its dissipation grows
// steeply with temperature before the resistor limits it, and plain thermal Newton from
// the ambient overshoots; continuation in the coupling reaches the balance. (An invented
// case for the mechanism: 460 C is beyond any real rectifier's rating.)
TEST(Thermal, ContinuationReachesWhatPlainNewtonMisses) {
  testing::CircuitBuilder b;
  b.V("V1", "a", "gnd", 1.0);
  b.R("R1", "a", "b", 0.2);
  b.D("D1", "b", "gnd", b.Part("f", Rectifier(350.0)));
  auto solver = BiasSolver::Create(b.circuit(), SolverOptions{});
  Solution s;
  const SolveSummary out = (*solver)->Solve(&s);
  ASSERT_EQ(out.status, SolveStatus::kConverged) << out.detail;
  ASSERT_EQ(out.aids, std::vector<std::string>{"thermal continuation"});
  // The reported point has no aid left in it: the full coupling's balance.
  const double p = s.element_voltage[2] * s.element_current[2];
  EXPECT_NEAR(s.junction_temp[2], 25.0 + 350.0 * p, 1e-9 * (s.junction_temp[2] + 273.15));
  EXPECT_GT(s.junction_temp[2], 300.0);
  EXPECT_LT(out.max_thermal_residual, 1e-9);
}

}  // namespace
}  // namespace knee
