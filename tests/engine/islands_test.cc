// Nodes held only by faint currents: a group joined by a small resistor and held to the
// rest by 1e-20 A junctions (island coordinates, mna.h), and a string of identical
// reverse-biased junctions (leakage balance). Both solvers must find the exact
// solution, not merely a point whose residual is below the current tolerance.
#include <gtest/gtest.h>

#include <boost/math/special_functions/lambert_w.hpp>
#include <cmath>

#include "circuit_builder.h"
#include "knee/solver.h"
#include "solve_with.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::CircuitBuilder;
using testing::SolveWith;

// CODATA 2018 exact values (SI 2019), written out independently of the engine.
constexpr double kK = 1.380649e-23;
constexpr double kQ = 1.602176634e-19;

// Two identical junctions (Is, n*Vt) in series with R across V carry the same current
// at the same junction voltage, i.e. one junction of ideality 2n: the Lambert W solution
// (T. C. Banwell and A. Jayakumar, Electronics Letters 36(4), 2000)
//   I = (m / R) W((Is R / m) exp((V + Is R) / m)) - Is,   m = 2 n Vt.
double TwoJunctionCurrent(double v, double r, double is, double n_vt) {
  const double m = 2.0 * n_vt;
  return m / r * boost::math::lambert_w0(is * r / m * std::exp((v + is * r) / m)) - is;
}

class FaintNodes : public ::testing::TestWithParam<SolverMethod> {};

// a = 0.1 V, D1 from a to p, 1 mOhm from p to m, D2 from m to gnd, Is = 1e-20 A: the
// island {p, m} is held only by currents near 1e-19 A, far below the 1e-12 A current
// tolerance. By symmetry p and m sit at V/2 (less the resistor's 1e-22 V drop). The
// solver finds that point, and names both nodes undetermined: their driving-point
// resistance is about n*Vt / (2 * 1e-19 A), so a stray picoampere would move them by
// volts.
TEST_P(FaintNodes, IslandBetweenTwoFaintJunctionsSitsAtHalfTheSupply) {
  CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-20;
  const int part = b.Part("tiny", m);
  b.V("V1", "a", "gnd", 0.1);
  b.D("D1", "a", "p", part);
  b.R("Rlink", "p", "m", 1e-3);
  b.D("D2", "m", "gnd", part);
  const Circuit& c = b.circuit();
  Solution s;
  const SolveSummary summary = SolveWith(c, GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_CLOSE(s.node_voltage[static_cast<size_t>(c.FindNode("p"))], 0.05, 1e-9, 0.0);
  EXPECT_CLOSE(s.node_voltage[static_cast<size_t>(c.FindNode("m"))], 0.05, 1e-9, 0.0);
  const double n_vt = kK * (25.0 + 273.15) / kQ;
  // The junctions' currents; the resistor's own 6e-23 V drop is below an ulp of 50 mV,
  // so its current computed from the node voltages is 0 (within the verifier's bound).
  const double expected = TwoJunctionCurrent(0.1, 1e-3, 1e-20, n_vt);
  EXPECT_CLOSE(s.element_current[static_cast<size_t>(c.FindElement("D1"))], expected, 1e-6, 0.0);
  EXPECT_CLOSE(s.element_current[static_cast<size_t>(c.FindElement("D2"))], expected, 1e-6, 0.0);
  EXPECT_EQ(summary.undetermined_nodes, (std::vector<std::string>{"p", "m"}));
}

// Four identical junctions in series, reverse-biased by 20 V, carry the same current
// (about -Is), so each holds the same reverse voltage: the string divides 20 V into
// four equal parts (common practice, no source: why series diodes share reverse voltage
// equally only when they are matched). Each node is held by nothing but leakage.
TEST_P(FaintNodes, MatchedReverseStringSharesTheVoltageEqually) {
  CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-15;
  const int part = b.Part("leak", m);
  b.V("V1", "top", "gnd", 20.0);
  b.D("D1", "a", "top", part);
  b.D("D2", "b", "a", part);
  b.D("D3", "c", "b", part);
  b.D("D4", "gnd", "c", part);
  const Circuit& c = b.circuit();
  Solution s;
  const SolveSummary summary = SolveWith(c, GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_CLOSE(s.node_voltage[static_cast<size_t>(c.FindNode("a"))], 15.0, 1e-9, 0.0);
  EXPECT_CLOSE(s.node_voltage[static_cast<size_t>(c.FindNode("b"))], 10.0, 1e-9, 0.0);
  EXPECT_CLOSE(s.node_voltage[static_cast<size_t>(c.FindNode("c"))], 5.0, 1e-9, 0.0);
  // Each node is held by 4e-14 S of leakage: a stray picoampere moves it by 26 V.
  EXPECT_EQ(summary.undetermined_nodes, (std::vector<std::string>{"a", "b", "c"}));
}

INSTANTIATE_TEST_SUITE_P(Solvers, FaintNodes,
                         ::testing::Values(SolverMethod::kClassic, SolverMethod::kPotential),
                         [](const ::testing::TestParamInfo<SolverMethod>& param) {
                           return param.param == SolverMethod::kClassic ? "classic" : "potential";
                         });

}  // namespace
}  // namespace knee
