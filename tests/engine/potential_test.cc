// The potential method: the co-content against its defining properties (its derivative
// is the device current, its second derivative the conductance, so it is convex), the
// line search's decrease of the network potential on hard circuits, agreement with the
// classic ladder, and the structural test for networks without a solution.
#include "potential.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "circuit_builder.h"
#include "knee/co_content.h"
#include "knee/diode_law.h"
#include "knee/solver.h"
#include "mna.h"
#include "solve_with.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::CircuitBuilder;
using testing::SolveWith;

DiodeConstants Zener() {
  DiodeModel m;
  m.sat_current = 1e-14;
  m.ideality = 1.2;
  m.breakdown_v = 5.6;
  m.breakdown_i = 1e-3;
  return ComputeDiodeConstants(m, 1.0, 25.0);
}

// Junction voltages at reverse, zero, knee, forward, breakdown bias and above the
// overflow-safe exponential's limit on both branches (forward x > 80, breakdown y > 80).
std::vector<double> Biases(const DiodeConstants& d) {
  return {-3.0,
          -1e-3,
          0.0,
          1e-3,
          0.4,
          0.6,
          0.75,
          -5.0,
          -5.6,
          -5.8,
          85.0 * d.n_vt,
          120.0 * d.n_vt,
          -d.vbr - 90.0 * d.nbr_vt};
}

// Central differences (common practice, no source): dC/dv is the junction current.
TEST(CoContent, DerivativeIsTheCurrent) {
  const DiodeConstants d = Zener();
  for (double v : Biases(d)) {
    const double h = 1e-6 * d.n_vt;
    const double numeric = (JunctionCoContent(d, v + h) - JunctionCoContent(d, v - h)) / (2 * h);
    const JunctionPoint p = EvaluateJunction(d, v);
    // Round-off of the difference: eps * |C| / h.
    const double floor = 1e-12 + 1e-15 * std::fabs(JunctionCoContent(d, v)) / h;
    EXPECT_CLOSE(numeric, p.current, 1e-6, floor) << "at " << v << " V";
  }
  EXPECT_EQ(JunctionCoContent(d, 0.0), 0.0);
}

// A high-voltage part far into reverse bias but short of breakdown: e^{-Vbr/(nbr Vt)}
// underflows to 0 while the ratio to it overflows; the co-content must stay finite and
// keep its derivative (regression: 0 * inf gave NaN past ~18 V on a 400 V part).
TEST(CoContent, FiniteForAHighVoltagePartInDeepReverse) {
  DiodeModel m;
  m.breakdown_v = 400.0;
  const DiodeConstants d = ComputeDiodeConstants(m, 1.0, 25.0);
  for (double v : {-10.0, -18.0, -20.0, -100.0, -350.0}) {
    const double c = JunctionCoContent(d, v);
    EXPECT_TRUE(std::isfinite(c)) << v;
    const double h = 1e-3;
    const double numeric = (JunctionCoContent(d, v + h) - JunctionCoContent(d, v - h)) / (2 * h);
    // Deep reverse: the current is -Is (minus a negligible breakdown term).
    EXPECT_CLOSE(numeric, EvaluateJunction(d, v).current, 1e-3, 1e-12 * std::fabs(c) / h) << v;
  }
}

// Second derivative = conductance >= 0 (Millar 1951: the co-content of a monotone
// resistor is convex), checked by central differences of the current, and convexity
// itself by the midpoint inequality on a grid across every region.
TEST(CoContent, ConvexWithConductanceAsSecondDerivative) {
  const DiodeConstants d = Zener();
  for (double v : Biases(d)) {
    const JunctionPoint p = EvaluateJunction(d, v);
    EXPECT_GT(p.conductance, 0.0) << v;
    const double h = 1e-6 * d.n_vt;
    const double numeric =
        (EvaluateJunction(d, v + h).current - EvaluateJunction(d, v - h).current) / (2 * h);
    EXPECT_CLOSE(numeric, p.conductance, 1e-5, 1e-20 + 1e-15 * std::fabs(p.current) / h) << v;
  }
  for (double a = -7.0; a < 4.0; a += 0.37) {
    for (double b = a + 0.05; b < 4.0; b += 0.53) {
      const double mid = JunctionCoContent(d, 0.5 * (a + b));
      const double chord = 0.5 * (JunctionCoContent(d, a) + JunctionCoContent(d, b));
      EXPECT_LE(mid, chord * (1 + 1e-12) + 1e-300) << a << " " << b;
    }
  }
}

// The co-content stays the law's integral far up the exponential and for a cold
// junction whose saturation current is below the smallest double: its central
// difference is the current.
TEST(CoContent, DerivativeIsTheExactLawEverywhere) {
  DiodeModel m;
  m.sat_current = 1e-14;
  m.ideality = 1.0;
  m.bandgap = 1.11;
  m.sat_temp_exp = 3.0;
  for (double temp : {25.0, -269.0}) {
    const DiodeConstants d = ComputeDiodeConstants(m, 1.0, temp);
    for (double x : {50.0, 90.0, 300.0, 3000.0}) {
      const double v = d.n_vt * (x - (d.log_is + 32.0));
      const double h = 1e-6 * d.n_vt;
      const double numeric = (JunctionCoContent(d, v + h) - JunctionCoContent(d, v - h)) / (2 * h);
      const double current = EvaluateJunction(d, v).current;
      if (!std::isfinite(current)) continue;
      EXPECT_CLOSE(numeric, current, 1e-6, 0.0) << temp << " " << x;
    }
  }
}

// The network potential's gradient is the KCL residual of the devices (no voltage
// source: no constraint), checked unknown by unknown with central differences.
TEST(CoContent, NetworkGradientIsTheKclResidual) {
  CircuitBuilder b;
  DiodeModel m;
  m.series_res = 3.0;
  m.breakdown_v = 4.0;
  const int part = b.Part("P", m);
  b.I("I1", "gnd", "a", 2e-3);
  b.R("R1", "a", "gnd", 1e3);
  b.D("D1", "a", "c", part);
  b.R("R2", "c", "gnd", 470.0);
  b.D("D2", "gnd", "c", part);
  internal::MnaSystem mna(b.circuit());
  std::vector<double> x = {0.9, 0.2};  // a, c (series resistance lives inside each diode)
  ASSERT_EQ(static_cast<int>(x.size()), mna.size());
  internal::AssemblyAids aids;
  aids.want_potential = true;
  mna.Assemble(x, aids);
  const std::vector<double> f(mna.residual().begin(), mna.residual().end());
  for (size_t u = 0; u < x.size(); ++u) {
    const double h = 1e-7;
    std::vector<double> up = x, down = x;
    up[u] += h;
    down[u] -= h;
    const double pu = mna.Assemble(up, aids).potential;
    const double pd = mna.Assemble(down, aids).potential;
    EXPECT_CLOSE((pu - pd) / (2 * h), f[u], 1e-5, 1e-9) << mna.UnknownName(static_cast<int>(u));
  }
}

// Hard circuits: a 1 kV string of forty diodes, tiny saturation currents (1e-30 A),
// near-zero series resistance (1 nOhm) with a zener clamp, and 5 kV through 10 kOhm into
// a stack of ten reverse-biased 100 V breakdown diodes.
std::vector<Circuit> HardCircuits() {
  std::vector<Circuit> circuits;
  {
    CircuitBuilder b;
    DiodeModel m;
    m.sat_current = 1e-14;
    m.breakdown_v = 100.0;
    m.breakdown_i = 1e-3;
    const int part = b.Part("Z", m);
    b.V("V1", "top", "gnd", 5000.0);
    b.R("R1", "top", "n0", 10e3);
    for (int k = 0; k < 10; ++k) {
      // Each diode's cathode faces the source: all ten in reverse, in breakdown.
      b.D("D" + std::to_string(k), k == 9 ? std::string("gnd") : "n" + std::to_string(k + 1),
          "n" + std::to_string(k), part);
    }
    circuits.push_back(b.circuit());
  }
  {
    CircuitBuilder b;
    DiodeModel m;
    m.sat_current = 1e-15;
    const int part = b.Part("S", m);
    b.V("V1", "top", "gnd", 1000.0);
    b.R("R1", "top", "n0", 10e3);
    for (int k = 0; k < 40; ++k) {
      b.D("D" + std::to_string(k), "n" + std::to_string(k),
          k == 39 ? std::string("gnd") : "n" + std::to_string(k + 1), part);
    }
    circuits.push_back(b.circuit());
  }
  {
    CircuitBuilder b;
    const int part = b.Part("T", 1e-30, 1.0);
    b.V("V1", "a", "gnd", 50.0);
    b.R("R1", "a", "b", 100.0);
    b.D("D1", "b", "c", part);
    b.D("D2", "c", "gnd", part);
    b.D("D3", "gnd", "b", part);
    b.R("R2", "c", "gnd", 1e6);
    circuits.push_back(b.circuit());
  }
  {
    CircuitBuilder b;
    DiodeModel m;
    m.series_res = 1e-9;
    m.breakdown_v = 12.0;
    m.breakdown_i = 5e-3;
    const int part = b.Part("Z", m);
    b.V("V1", "in", "gnd", 240.0);
    b.R("R1", "in", "out", 2.2e3);
    b.D("Z1", "gnd", "out", part);
    b.D("D2", "out", "x", part);
    b.R("R2", "x", "gnd", 1e-3);
    b.I("I1", "gnd", "out", 1e-3);
    circuits.push_back(b.circuit());
  }
  return circuits;
}

// Every accepted step of the line search decreases the potential (Armijo 1966): the
// recorded change is at most its round-off scale (and negative for almost every step),
// consecutive records chain (the next step starts from the potential the last one
// reached), and the answer agrees with the classic ladder to 1e-9 relative.
TEST(PotentialMethod, LineSearchDecreasesThePotentialOnHardCircuits) {
  for (const Circuit& c : HardCircuits()) {
    ASSERT_TRUE(CheckTopology(c).empty());
    Solution s;
    std::vector<NewtonStepRecord> trace;
    const SolveSummary summary = SolveWith(c, SolverMethod::kPotential, &s, true, &trace);
    ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
    EXPECT_EQ(summary.method, SolverMethod::kPotential);
    EXPECT_TRUE(summary.unique);
    EXPECT_TRUE(summary.aids.empty());
    ASSERT_FALSE(trace.empty());
    int descents = 0;
    for (size_t k = 0; k < trace.size(); ++k) {
      const NewtonStepRecord& r = trace[k];
      EXPECT_GT(r.step_length, 0.0);
      if (r.phase != "potential") continue;  // the step onto the sources' constraints
      EXPECT_LE(r.potential_change, r.potential_roundoff) << "step " << r.step;
      if (r.potential_change < 0) ++descents;
      if (k + 1 < trace.size()) {
        EXPECT_CLOSE(trace[k + 1].potential, r.potential + r.potential_change, 1e-12,
                     r.potential_roundoff);
      }
    }
    EXPECT_GT(descents, 0);
    Solution classic;
    const SolveSummary cs = SolveWith(c, SolverMethod::kClassic, &classic);
    ASSERT_EQ(cs.status, SolveStatus::kConverged) << cs.detail;
    for (size_t n = 1; n < c.nodes.size(); ++n) {
      EXPECT_CLOSE(s.node_voltage[n], classic.node_voltage[n], 1e-9, 1e-12) << c.nodes[n];
    }
  }
}

// 1 mA pushed into the cathode of a diode without breakdown (Is = 10 fA): no DC
// solution. The solver says so, and names the source and the diode.
TEST(PotentialMethod, UnboundedNetworkIsNamed) {
  CircuitBuilder b;
  DiodeModel m;
  const int part = b.Part("P", m);
  b.V("V1", "a", "gnd", 5.0);
  b.R("R1", "a", "b", 1e3);
  b.D("Dblock", "gnd", "k", part);
  b.I("Ipush", "gnd", "k", 1e-3);
  b.R("R2", "b", "gnd", 1e3);
  Solution s;
  const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
  EXPECT_EQ(summary.status, SolveStatus::kNoSolution);
  EXPECT_NE(summary.detail.find("'Ipush'"), std::string::npos) << summary.detail;
  EXPECT_NE(summary.detail.find("'Dblock'"), std::string::npos) << summary.detail;
  EXPECT_NE(summary.detail.find("'k'"), std::string::npos) << summary.detail;
  EXPECT_EQ(summary.detail.find("'R1'"), std::string::npos) << summary.detail;
  EXPECT_EQ(std::string(ToString(summary.status)), "no solution");
}

// The same, pulled the other way through two diodes' anodes, and the bounded cases next
// to it: a current below the diodes' saturation currents, and a breakdown diode.
TEST(PotentialMethod, UnboundedOnlyBeyondTheReverseLimit) {
  const auto network = [](double amps, bool breakdown) {
    CircuitBuilder b;
    DiodeModel m;
    m.sat_current = 1e-12;
    if (breakdown) m.breakdown_v = 10.0;
    const int part = b.Part("P", m);
    b.V("V1", "a", "gnd", 1.0);
    b.R("R1", "a", "gnd", 1e3);
    b.D("Da", "m", "gnd", part);
    b.D("Db", "m", "a", part);
    b.I("Ipull", "m", "gnd", amps);
    return b.circuit();
  };
  EXPECT_TRUE(internal::FindUnboundedCut(network(1e-3, false)).has_value());
  const auto message = internal::FindUnboundedCut(network(1e-3, false));
  ASSERT_TRUE(message);
  EXPECT_NE(message->find("'Ipull'"), std::string::npos) << *message;
  EXPECT_NE(message->find("'Da'"), std::string::npos) << *message;
  EXPECT_NE(message->find("'Db'"), std::string::npos) << *message;
  EXPECT_NE(message->find("out of"), std::string::npos) << *message;
  EXPECT_FALSE(internal::FindUnboundedCut(network(1e-3, true)).has_value());
  // 1.5 pA < 2 pA, the two saturation currents together: a solution exists.
  Solution s;
  const SolveSummary ok = SolveWith(network(1.5e-12, false), SolverMethod::kPotential, &s);
  EXPECT_EQ(ok.status, SolveStatus::kConverged) << ok.detail;
  EXPECT_FALSE(internal::FindUnboundedCut(network(1.5e-12, false)).has_value());
  EXPECT_TRUE(internal::FindUnboundedCut(network(2.5e-12, false)).has_value());
  // Without a current source (none, or one of 0 A) no set of nodes can be pushed: a set
  // closed under anode -> cathode only ever gains from its diodes (docs/solver.md).
  EXPECT_FALSE(internal::FindUnboundedCut(network(0.0, false)).has_value());
  CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-12;
  const int part = b.Part("P", m);
  b.V("V1", "a", "gnd", 1.0);
  b.D("Da", "m", "gnd", part);  // m held by two diodes in reverse only
  b.D("Db", "m", "a", part);
  b.D("Dc", "gnd", "k", part);
  b.D("Dd", "a", "k", part);
  EXPECT_FALSE(internal::FindUnboundedCut(b.circuit()).has_value());
  const SolveSummary held = SolveWith(b.circuit(), SolverMethod::kPotential, &s);
  EXPECT_EQ(held.status, SolveStatus::kConverged) << held.detail;
}

// Method selection and validation.
TEST(PotentialMethod, OptionsAndSelection) {
  SolverOptions o;
  EXPECT_EQ(o.method, SolverMethod::kAuto);  // the potential method where it applies
  o.method = static_cast<SolverMethod>(7);
  const auto problem = Validate(o);
  ASSERT_TRUE(problem);
  EXPECT_NE(problem->find("method"), std::string::npos);
  EXPECT_STREQ(ToString(SolverMethod::kPotential), "potential");

  CircuitBuilder b;
  b.V("V1", "a", "gnd", 2.0);
  b.R("R1", "a", "b", 1e3);
  b.R("R2", "b", "gnd", 1e3);
  Solution s;
  EXPECT_EQ(SolveWith(b.circuit(), SolverMethod::kAuto, &s).method, SolverMethod::kPotential);
  EXPECT_CLOSE(s.node_voltage[b.Node("b")], 1.0, 1e-12, 0.0);  // divider, closed form
  EXPECT_EQ(SolveWith(b.circuit(), SolverMethod::kClassic, &s).method, SolverMethod::kClassic);
  // A negative resistor is outside the class: auto runs the classic ladder, and the
  // potential method refuses.
  b.circuit().elements[1].value = -1e3;
  EXPECT_TRUE(internal::NonMonotoneReason(b.circuit()).has_value());
  const SolveSummary refused = SolveWith(b.circuit(), SolverMethod::kPotential, &s);
  EXPECT_NE(refused.status, SolveStatus::kConverged);
  EXPECT_NE(refused.detail.find("'R1'"), std::string::npos) << refused.detail;
  const SolveSummary classic = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
  EXPECT_EQ(classic.method, SolverMethod::kClassic);
  EXPECT_FALSE(classic.unique);
}

// A node between two matched junctions reverse biased by 4 kV in all: each junction's
// current is -Is in double precision whatever the split (exp(-4000/(n Vt)) is below the
// smallest double, 4.9e-324: IEEE 754-2008 binary64), so its voltage is undetermined
// and the Jacobian singular there. Only that node is named; the nodes that resistors
// and a forward junction hold are not (before, a singular Jacobian named every node).
TEST(LooseNodes, SingularJacobianNamesOnlyTheUntiedNode) {
  CircuitBuilder b;
  const int part = b.Part("P", 1e-12, 1.0);
  b.V("V1", "hv", "gnd", 4000.0);
  b.R("R1", "hv", "top", 0.01);
  b.D("Dup", "mid", "top", part);    // reverse
  b.D("Ddown", "gnd", "mid", part);  // reverse
  b.V("V2", "s", "gnd", 5.0);
  b.R("R2", "s", "a", 1e3);
  b.D("Dfwd", "a", "gnd", part);
  for (const SolverMethod method : {SolverMethod::kClassic, SolverMethod::kPotential}) {
    Solution s;
    const SolveSummary summary = SolveWith(b.circuit(), method, &s);
    ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
    ASSERT_EQ(summary.undetermined_nodes.size(), 1u) << ToString(method);
    EXPECT_EQ(summary.undetermined_nodes[0], "mid");
    // Each junction carries -Is (the contract's law, reverse saturation); KCL at "mid"
    // holds whatever its voltage.
    EXPECT_CLOSE(s.element_current[2], -1e-12, 1e-9, 0.0);
    EXPECT_CLOSE(s.element_current[3], -1e-12, 1e-9, 0.0);
  }
}

}  // namespace
}  // namespace knee
