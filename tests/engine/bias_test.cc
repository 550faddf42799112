// BiasSolver on hand-built circuits: linear circuits against closed forms, diode
// circuits against the model's own defining properties, and the solver's bookkeeping.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <vector>

#include "circuit_builder.h"
#include "knee/diode_law.h"
#include "knee/quantity.h"
#include "knee/sensitivity.h"
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

double Parallel(double a, double b) { return a * b / (a + b); }

// (Appending instead of operator+ sidesteps a false -Wrestrict of g++ 12.)
std::string Name(const char* prefix, int k) {
  std::string name(prefix);
  name += std::to_string(k);
  return name;
}

// Voltage divider: v = V * R2 / (R1 + R2) (Ohm's law and KCL, closed form).
TEST(BiasLinear, Divider) {
  CircuitBuilder b;
  const int v1 = b.V("V1", "in", "gnd", 10.0);
  const int r1 = b.R("R1", "in", "mid", 3e3);
  b.R("R2", "mid", "0", 1e3);
  Solution s;
  const SolveSummary summary = SolveOk(b.circuit(), &s);
  EXPECT_CLOSE(s.node_voltage[b.Node("mid")], 10.0 * 1e3 / 4e3, 1e-12, 0.0);
  EXPECT_CLOSE(s.element_current[r1], 10.0 / 4e3, 1e-12, 0.0);
  // The source delivers power: its current (P -> N through the source) is negative.
  EXPECT_CLOSE(s.element_current[v1], -10.0 / 4e3, 1e-12, 0.0);
  EXPECT_TRUE(summary.aids.empty());
  EXPECT_LE(summary.max_kcl_residual, 1e-15);
}

// A 10 uOhm resistor feeding a 1 TOhm load: the divider closed form. The residual at the
// resistor's nodes carries round-off of G * ulp(10 V) ~ 2e-10 A, far above the 1e-12 A
// tolerance; the round-off allowance of the residual tests must let this converge.
TEST(BiasLinear, StiffResistorConverges) {
  CircuitBuilder b;
  b.V("V1", "a", "gnd", 10.0);
  b.R("R1", "a", "b", 1e-5);
  const int load = b.R("R2", "b", "gnd", 1e12);
  Solution s;
  SolveOk(b.circuit(), &s);
  EXPECT_CLOSE(s.node_voltage[b.Node("b")], 10.0 * 1e12 / (1e12 + 1e-5), 1e-14, 0.0);
  EXPECT_CLOSE(s.element_current[load], 10.0 / (1e12 + 1e-5), 1e-12, 0.0);
}

// Wheatstone bridge with a bridging resistor R5: by Thevenin's theorem (textbook circuit
// theory, common practice) I5 = Vth / (Rth + R5), Vth = Vs (R2/(R1+R2) - R4/(R3+R4)),
// Rth = R1||R2 + R3||R4.
TEST(BiasLinear, WheatstoneBridge) {
  const double vs = 12.0, r1 = 1e3, r2 = 2.2e3, r3 = 3.3e3, r4 = 4.7e3, r5 = 680.0;
  CircuitBuilder b;
  b.V("Vs", "top", "gnd", vs);
  b.R("R1", "top", "a", r1);
  b.R("R2", "a", "gnd", r2);
  b.R("R3", "top", "b", r3);
  b.R("R4", "b", "gnd", r4);
  const int e5 = b.R("R5", "a", "b", r5);
  Solution s;
  SolveOk(b.circuit(), &s);
  const double vth = vs * (r2 / (r1 + r2) - r4 / (r3 + r4));
  const double rth = Parallel(r1, r2) + Parallel(r3, r4);
  EXPECT_CLOSE(s.element_current[e5], vth / (rth + r5), 1e-12, 0.0);
}

// R-2R ladder terminated in 2R: every node looks into 2R on both sides, so the voltage
// halves from node to node, v_k = Vs / 2^k (series/parallel reduction, common practice).
TEST(BiasLinear, R2RLadderHalvesPerSection) {
  const double r = 1e3, vs = 8.0;
  const int sections = 12;
  CircuitBuilder b;
  b.V("Vs", "n0", "gnd", vs);
  for (int k = 1; k <= sections; ++k) {
    b.R(Name("Rs", k), Name("n", k - 1), Name("n", k), r);
    b.R(Name("Rp", k), Name("n", k), "gnd", 2 * r);
  }
  b.R("Rend", Name("n", sections), "gnd", 2 * r);
  Solution s;
  SolveOk(b.circuit(), &s);
  for (int k = 1; k <= sections; ++k) {
    EXPECT_CLOSE(s.node_voltage[b.Node(Name("n", k))], vs / std::pow(2.0, k), 1e-12, 0.0)
        << "node n" << k;
  }
}

// A current source and a voltage source into one resistor network: superposition
// (textbook circuit theory, common practice) gives each node voltage as the sum of the
// two single-source responses, each a series/parallel reduction.
TEST(BiasLinear, CurrentSourceSuperposition) {
  const double i = 2e-3, v = 5.0, r1 = 1e3, r2 = 2e3, r3 = 3e3, r4 = 4e3;
  CircuitBuilder b;
  const int src = b.I("I1", "gnd", "a", i);  // delivers i into node a
  b.R("R1", "a", "gnd", r1);
  b.R("R2", "a", "b", r2);
  b.R("R3", "b", "gnd", r3);
  b.R("R4", "c", "b", r4);
  b.V("V1", "c", "gnd", v);
  Solution s;
  SolveOk(b.circuit(), &s);
  // V alone (current source open).
  const double rb = Parallel(r3, r1 + r2);
  const double vb_v = v * rb / (r4 + rb);
  const double va_v = vb_v * r1 / (r1 + r2);
  // I alone (voltage source shorted).
  const double ra = Parallel(r1, r2 + Parallel(r3, r4));
  const double va_i = i * ra;
  const double vb_i = va_i * Parallel(r3, r4) / (r2 + Parallel(r3, r4));
  EXPECT_CLOSE(s.node_voltage[b.Node("a")], va_v + va_i, 1e-12, 0.0);
  EXPECT_CLOSE(s.node_voltage[b.Node("b")], vb_v + vb_i, 1e-12, 0.0);
  EXPECT_CLOSE(s.element_current[src], i, 0.0, 0.0);
  EXPECT_CLOSE(s.element_voltage[src], -(va_v + va_i), 1e-12, 0.0);
}

// A reverse-biased junction carries -area*Is: exp(-5 V / nVt) ~ e^-190 is far below
// round-off (Shockley, Bell Syst. Tech. J. 28, 1949: reverse saturation current). 1e-6
// relative means no shunt conductance (gmin) may be left in the reported answer.
TEST(BiasDiode, ReverseCurrentIsMinusAreaTimesIs) {
  DiodeModel model;
  model.sat_current = 2e-14;
  model.series_res = 10.0;
  for (const double area : {1.0, 3.0}) {
    CircuitBuilder b;
    const int part = b.Part("P", model);
    b.V("V1", "k", "gnd", 5.0);
    const int d = b.D("D1", "gnd", "k", part, area);
    Solution s;
    SolveOk(b.circuit(), &s);
    EXPECT_CLOSE(s.element_current[d], -area * model.sat_current, 1e-6, 0.0);
    EXPECT_CLOSE(s.element_voltage[d], -5.0, 1e-12, 0.0);
  }
}

// Forward voltage rises by n*Vt*ln 2 when the current doubles (the exponential law;
// common practice, no source). Exact up to the "-1" of the law, i.e. Is/I ~ 1e-11.
TEST(BiasDiode, DoublingCurrentAddsNVtLn2) {
  DiodeModel model;
  model.sat_current = 1e-14;
  model.ideality = 1.7;
  double vj[2];
  for (int k = 0; k < 2; ++k) {
    CircuitBuilder b;
    const int part = b.Part("P", model);
    b.I("I1", "gnd", "a", (k + 1) * 1e-3);
    const int d = b.D("D1", "a", "gnd", part);
    Solution s;
    SolveOk(b.circuit(), &s);
    vj[k] = s.junction_voltage[d];
  }
  const double n_vt = model.ideality * ThermalVoltage(ToKelvin(25.0));
  EXPECT_CLOSE(vj[1] - vj[0], n_vt * std::log(2.0), 1e-9, 0.0);
}

// A reverse-biased diode forced to carry breakdown_i sits at breakdown_v at ref_temp
// (the contract's definition of breakdown_i, netlist-format.md); at another temperature
// at breakdown_v * (1 + breakdown_tc * (T - T0)) (the contract's law). The offset from
// the forward term is nbr*Vt*ln(1 + Is/Ibr) ~ 1e-13 V.
TEST(BiasDiode, BreakdownSitsAtBreakdownVoltage) {
  DiodeModel model;
  model.sat_current = 1e-15;
  model.ideality = 1.1;
  model.series_res = 3.0;
  model.breakdown_v = 3.6;
  model.breakdown_i = 5e-3;
  model.breakdown_tc = -4e-4;
  for (const double temp : {25.0, 75.0, -20.0}) {
    CircuitBuilder b(temp);
    const int part = b.Part("Z", model);
    b.I("I1", "gnd", "k", model.breakdown_i);  // pushes breakdown_i into the cathode
    const int z = b.D("Z1", "gnd", "k", part);
    Solution s;
    SolveOk(b.circuit(), &s);
    const double vbr = 3.6 * (1.0 + (-4e-4) * (temp - 25.0));
    EXPECT_CLOSE(s.element_current[z], -model.breakdown_i, 1e-12, 0.0);
    EXPECT_CLOSE(s.junction_voltage[z], -vbr, 0.0, 1e-9) << "temp " << temp;
    // The terminal voltage adds the ohmic drop I * series_res.
    EXPECT_CLOSE(s.element_voltage[z], s.junction_voltage[z] + s.element_current[z] * 3.0, 1e-12,
                 0.0);
  }
}

// Bridge rectifier driven by 10 V DC into a load: D1 and D4 conduct, D2 and D3 block.
// The conducting path is a source, two identical junctions and a resistor in series, whose
// exact current is the Lambert W form with 2*n*Vt (Banwell & Jayakumar, Electronics
// Letters 36(4), 2000), up to the blocking diodes' leakage (~Is/I ~ 1e-11 relative).
Circuit Bridge(const DiodeModel& model, double volts, double load) {
  CircuitBuilder b;
  const int part = b.Part("BR", model);
  b.V("V1", "ac", "gnd", volts);
  b.D("D1", "ac", "p", part);
  b.D("D2", "gnd", "p", part);
  b.D("D3", "n", "ac", part);
  b.D("D4", "n", "gnd", part);
  b.R("Rload", "p", "n", load);
  return b.circuit();
}

double LambertCurrentTwoJunctions(double v, double r, double is, double n_vt) {
  // w + ln w = y with y = ln(Is R / (2 nVt)) + (V + Is R) / (2 nVt); y ~ 300 here, so
  // Newton on the log form (no overflow) instead of exp(y).
  const double m = 2.0 * n_vt;
  const double y = std::log(is * r / m) + (v + is * r) / m;
  double w = y - std::log(y);
  for (int k = 0; k < 50; ++k) w -= (w + std::log(w) - y) / (1.0 + 1.0 / w);
  return m / r * w - is;
}

TEST(BiasDiode, BridgeRectifierConverges) {
  DiodeModel model;
  model.sat_current = 1e-14;
  const Circuit c = Bridge(model, 10.0, 1e3);
  Solution s;
  const SolveSummary summary = SolveOk(c, &s);
  const double expected = LambertCurrentTwoJunctions(10.0, 1e3, 1e-14, ThermalVoltage(298.15));
  EXPECT_CLOSE(s.element_current[c.FindElement("Rload")], expected, 1e-9, 0.0);
  EXPECT_CLOSE(s.element_current[c.FindElement("D1")], expected, 1e-9, 0.0);
  EXPECT_CLOSE(s.element_current[c.FindElement("D2")], -1e-14, 1e-6, 0.0);
  EXPECT_LE(summary.max_kcl_residual, 1e-12);
}

// Without junction limiting Newton may need the aid ladder; whatever path it takes, the
// reported answer must satisfy KCL on the exact model (checked here independently of the
// solver's own verification) and match the limited solve.
TEST(BiasDiode, BridgeRectifierWithoutLimitingSatisfiesKcl) {
  DiodeModel model;
  model.sat_current = 1e-14;
  const Circuit c = Bridge(model, 10.0, 1e3);
  SolverOptions o;
  o.method = SolverMethod::kClassic;  // plain Newton without limiting is under test
  o.junction_limiting = false;
  Solution s;
  const SolveSummary summary = SolveOk(c, &s, o);
  ASSERT_EQ(summary.status, SolveStatus::kConverged);
  const auto i = [&](const char* name) { return s.element_current[c.FindElement(name)]; };
  // KCL at p: D1 + D2 in, Rload out. At n: Rload in, D3 + D4 out. At ac: V1 delivers D1 - D3.
  EXPECT_NEAR(i("D1") + i("D2") - i("Rload"), 0.0, 1e-9);
  EXPECT_NEAR(i("Rload") - i("D3") - i("D4"), 0.0, 1e-9);
  EXPECT_NEAR(-i("V1") - i("D1") + i("D3"), 0.0, 1e-9);
  const double expected = LambertCurrentTwoJunctions(10.0, 1e3, 1e-14, ThermalVoltage(298.15));
  EXPECT_CLOSE(i("Rload"), expected, 1e-9, 0.0);
}

// Without limiting, plain Newton needs dozens of steps on this bridge; with a budget of 30
// it fails, and the aid ladder has to carry it. Source stepping alone (gmin stepping off)
// must still reach the exact answer through its final plain Newton run.
TEST(BiasAids, SourceSteppingReachesTheExactAnswer) {
  DiodeModel model;
  model.sat_current = 1e-14;
  const Circuit c = Bridge(model, 10.0, 1e3);
  SolverOptions o;
  o.method = SolverMethod::kClassic;  // the aid ladder is under test
  o.junction_limiting = false;
  o.max_newton_steps = 30;
  o.gmin_stepping = false;
  auto solver = BiasSolver::Create(c, o);
  ASSERT_TRUE(solver.ok());
  (*solver)->set_trace(true);
  Solution s;
  const SolveSummary summary = (*solver)->Solve(&s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  ASSERT_EQ(summary.aids.size(), 1u);
  EXPECT_EQ(summary.aids[0], "source stepping");
  EXPECT_FALSE((*solver)->trace().empty());
  EXPECT_EQ((*solver)->trace().back().phase, "newton (no aid)");
  const double expected = LambertCurrentTwoJunctions(10.0, 1e3, 1e-14, ThermalVoltage(298.15));
  EXPECT_CLOSE(s.element_current[c.FindElement("Rload")], expected, 1e-9, 0.0);
}

// gmin stepping alone: same requirement, and no shunt left in the answer (the reverse
// diodes' leakage is exactly -Is, which a leftover 1e-14 S shunt at ~10 V would spoil).
// The step budget is one short of what plain Newton needs here from the cold start
// (the test checks that the aid was used), while the warm-started gmin rungs fit.
TEST(BiasAids, GminSteppingLeavesNoShunt) {
  DiodeModel model;
  model.sat_current = 1e-14;
  const Circuit c = Bridge(model, 10.0, 1.0);
  SolverOptions o;
  o.method = SolverMethod::kClassic;  // the aid ladder is under test
  o.source_stepping = false;
  int plain_steps = 0;
  {
    auto plain = BiasSolver::Create(c, o);
    ASSERT_TRUE(plain.ok());
    Solution s;
    const SolveSummary summary = (*plain)->Solve(&s, {}, /*allow_aids=*/false);
    ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
    plain_steps = summary.newton_steps;
  }
  ASSERT_GT(plain_steps, 4);
  o.max_newton_steps = plain_steps - 1;
  auto solver = BiasSolver::Create(c, o);
  ASSERT_TRUE(solver.ok());
  Solution s;
  const SolveSummary summary = (*solver)->Solve(&s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  ASSERT_EQ(summary.aids.size(), 1u);
  EXPECT_EQ(summary.aids[0], "gmin stepping");
  EXPECT_CLOSE(s.element_current[c.FindElement("D3")], -1e-14, 1e-6, 0.0);
}

// When nothing works the summary says why, with numbers, and names what still moves.
TEST(BiasAids, FailureIsReportedWithDetail) {
  DiodeModel model;
  const Circuit c = Bridge(model, 10.0, 1e3);
  SolverOptions o;
  o.method = SolverMethod::kClassic;  // the classic ladder's failure report is under test
  o.max_newton_steps = 2;
  o.gmin_stepping = false;
  o.source_stepping = false;
  auto solver = BiasSolver::Create(c, o);
  ASSERT_TRUE(solver.ok());
  Solution s;
  const SolveSummary summary = (*solver)->Solve(&s);
  EXPECT_EQ(summary.status, SolveStatus::kNoConvergence);
  EXPECT_NE(summary.detail.find("no convergence in 2 steps"), std::string::npos) << summary.detail;
  EXPECT_FALSE(summary.unsettled.empty());
  EXPECT_TRUE((*solver)->unknowns().empty());
}

// Warm start and UpdateValues: a new source value on the same pattern gives the same
// answer as a fresh solver.
TEST(BiasSolverApi, UpdateValuesAndWarmStart) {
  DiodeModel model;
  model.series_res = 2.0;
  Circuit c = Bridge(model, 10.0, 1e3);
  auto solver = BiasSolver::Create(c, {});
  ASSERT_TRUE(solver.ok());
  Solution first;
  ASSERT_EQ((*solver)->Solve(&first).status, SolveStatus::kConverged);
  const std::vector<double> start((*solver)->unknowns().begin(), (*solver)->unknowns().end());
  EXPECT_EQ(static_cast<int>(start.size()), (*solver)->unknown_count());
  c.elements[static_cast<size_t>(c.FindElement("V1"))].value = 12.0;
  c.temp = 60.0;
  (*solver)->UpdateValues(c);
  Solution warm, fresh;
  ASSERT_EQ((*solver)->Solve(&warm, start).status, SolveStatus::kConverged);
  SolveOk(c, &fresh);
  for (size_t n = 0; n < c.nodes.size(); ++n) {
    EXPECT_CLOSE(warm.node_voltage[n], fresh.node_voltage[n], 1e-12, 1e-15);
  }
  // series_res to zero removes the internal nodes: the solver rebuilds its pattern.
  c.parts[0].model.series_res = 0.0;
  (*solver)->UpdateValues(c);
  Solution rebuilt, fresh2;
  ASSERT_EQ((*solver)->Solve(&rebuilt, start).status, SolveStatus::kConverged);
  SolveOk(c, &fresh2);
  EXPECT_CLOSE(rebuilt.node_voltage[c.FindNode("p")], fresh2.node_voltage[c.FindNode("p")], 1e-12,
               0.0);
}

// A changed part model on the same diodes (a spread sample's draws) computes their
// constants again in place: the solution is that of a fresh solver, bit for bit.
TEST(BiasSolverApi, ChangedPartModelGivesTheFreshSolution) {
  DiodeModel model;
  model.series_res = 0.5;
  Circuit c = Bridge(model, 10.0, 1e3);
  auto solver = BiasSolver::Create(c, {});
  ASSERT_TRUE(solver.ok());
  Solution before;
  ASSERT_EQ((*solver)->Solve(&before).status, SolveStatus::kConverged);
  c.parts[0].model.sat_current *= 3.0;
  c.parts[0].model.ideality = 1.3;
  (*solver)->UpdateValues(c);
  Solution updated, fresh;
  ASSERT_EQ((*solver)->Solve(&updated).status, SolveStatus::kConverged);
  SolveOk(c, &fresh);
  ASSERT_EQ(updated.node_voltage.size(), fresh.node_voltage.size());
  for (size_t n = 0; n < c.nodes.size(); ++n) {
    EXPECT_EQ(updated.node_voltage[n], fresh.node_voltage[n]) << c.nodes[n];
  }
  for (size_t e = 0; e < c.elements.size(); ++e) {
    EXPECT_EQ(updated.element_current[e], fresh.element_current[e]) << c.elements[e].name;
  }
  // The model did change the answer: the test compares two new numbers, not old ones.
  EXPECT_NE(updated.node_voltage[c.FindNode("p")], before.node_voltage[c.FindNode("p")]);
}

TEST(BiasSolverApi, InvalidOptionsAreRejectedWithTheFieldName) {
  CircuitBuilder b;
  b.V("V1", "a", "gnd", 1.0);
  b.R("R1", "a", "gnd", 1.0);
  SolverOptions o;
  o.rel_tol = 0.5;
  auto solver = BiasSolver::Create(b.circuit(), o);
  ASSERT_FALSE(solver.ok());
  EXPECT_NE(solver.errors()[0].message.find("rel_tol"), std::string::npos);
  o = {};
  o.gmin_factor = 1.0;
  EXPECT_NE(Validate(o)->find("gmin_factor"), std::string::npos);
  EXPECT_FALSE(Validate(SolverOptions{}).has_value());
}

// Small-signal resistance: rd = n*Vt / (I + Is) + series_res/area (derivative of the
// Shockley law plus the ohmic part; common practice, no source).
TEST(BiasDiode, SmallSignalResistance) {
  DiodeModel model;
  model.sat_current = 1e-12;
  model.ideality = 1.5;
  model.series_res = 4.0;
  CircuitBuilder b;
  const int part = b.Part("P", model);
  b.I("I1", "gnd", "a", 2e-3);
  const int d = b.D("D1", "a", "gnd", part, 2.0);
  Solution s;
  SolveOk(b.circuit(), &s);
  const double n_vt = 1.5 * ThermalVoltage(ToKelvin(25.0));
  EXPECT_CLOSE(s.small_signal_res[d], n_vt / (2e-3 + 2.0 * 1e-12) + 4.0 / 2.0, 1e-9, 0.0);
  EXPECT_TRUE(std::isnan(s.small_signal_res[0]));  // not a diode
}

}  // namespace
}  // namespace knee

namespace knee {
namespace {

// The same warm-started solve with and without the converged detail: the numbers are the
// same bits, and only the converged text is left out.
struct WarmPair {
  SolveSummary summary;
  std::vector<double> x;
};

WarmPair SolveWarmOnce(const SolverOptions& o, bool describe) {
  DiodeModel model;
  model.series_res = 2.0;
  Circuit c = Bridge(model, 10.0, 1e3);
  auto solver = BiasSolver::Create(c, o);
  EXPECT_TRUE(solver.ok());
  (*solver)->set_describe_converged(describe);
  Solution s;
  (*solver)->Solve(&s);
  std::vector<double> start((*solver)->unknowns().begin(), (*solver)->unknowns().end());
  if (start.empty()) start.assign(static_cast<size_t>((*solver)->unknown_count()), 0.1);
  c.elements[static_cast<size_t>(c.FindElement("V1"))].value = 10.5;
  (*solver)->UpdateValues(c);
  WarmPair r;
  r.summary = (*solver)->Solve(&s, start);
  r.x.assign((*solver)->unknowns().begin(), (*solver)->unknowns().end());
  return r;
}

TEST(BiasSolverApi, ConvergedDetailLeftOutOnRequestOnly) {
  const WarmPair on = SolveWarmOnce({}, true);
  const WarmPair off = SolveWarmOnce({}, false);
  ASSERT_EQ(on.summary.status, SolveStatus::kConverged) << on.summary.detail;
  ASSERT_EQ(off.summary.status, SolveStatus::kConverged);
  EXPECT_EQ(on.summary.detail.rfind("newton from the warm start: converged in ", 0), 0u)
      << on.summary.detail;
  EXPECT_TRUE(off.summary.detail.empty()) << off.summary.detail;
  EXPECT_EQ(on.summary.newton_steps, off.summary.newton_steps);
  EXPECT_EQ(on.summary.max_kcl_residual, off.summary.max_kcl_residual);
  EXPECT_EQ(on.summary.worst_node, off.summary.worst_node);
  ASSERT_EQ(on.x.size(), off.x.size());
  for (size_t i = 0; i < on.x.size(); ++i) EXPECT_EQ(on.x[i], off.x[i]) << i;
}

// The numbers of a solution, bit for bit (NaN where NaN).
bool SameBits(const std::vector<double>& a, const std::vector<double>& b) {
  // memcmp may not be handed the null data() of an empty vector.
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

void ExpectSameSolution(const Solution& a, const Solution& b) {
  EXPECT_TRUE(SameBits(a.node_voltage, b.node_voltage));
  EXPECT_TRUE(SameBits(a.element_voltage, b.element_voltage));
  EXPECT_TRUE(SameBits(a.element_current, b.element_current));
  EXPECT_TRUE(SameBits(a.junction_voltage, b.junction_voltage));
  EXPECT_TRUE(SameBits(a.small_signal_res, b.small_signal_res));
  EXPECT_TRUE(SameBits(a.junction_temp, b.junction_temp));
  EXPECT_TRUE(SameBits(a.sink_temp, b.sink_temp));
}

// A diode ladder (bench/gen_circuits.py's shape): its cold solve takes the settling run
// of loose nodes after the potential method, so every release of Conclude is passed.
Circuit DiodeLadder(int stages) {
  CircuitBuilder b;
  DiodeModel model;
  model.sat_current = 2e-9;
  model.ideality = 1.9;
  model.breakdown_v = 75.0;
  model.breakdown_i = 5e-6;
  const int part = b.Part("sig", model);
  b.V("V1", "n0", "gnd", 5.0);
  for (int k = 1; k <= stages; ++k) {
    b.R(Name("R", k), Name("n", k - 1), Name("n", k), 100.0);
    b.D(Name("D", k), Name("n", k), "gnd", part);
  }
  return b.circuit();
}

// set_single_point frees the factors and the matrix before the solution is filled: the
// solution and the unknowns are those of a solver that keeps them, bit for bit; a later
// gradient and a later warm solve make what they need again and agree with a solver that
// kept it (to the last digits only: their factors are fresh).
TEST(BiasSolverApi, SinglePointGivesTheSameNumbersAndSolvesAgain) {
  DiodeModel bridge_model;
  bridge_model.series_res = 2.0;
  for (Circuit c : {Bridge(bridge_model, 10.0, 1e3), DiodeLadder(40)}) {
    auto kept = BiasSolver::Create(c, {});
    auto single = BiasSolver::Create(c, {});
    ASSERT_TRUE(kept.ok() && single.ok());
    (*single)->set_single_point(true);
    Solution a, b;
    const SolveSummary sa = (*kept)->Solve(&a);
    const SolveSummary sb = (*single)->Solve(&b);
    ASSERT_EQ(sa.status, SolveStatus::kConverged) << sa.detail;
    ASSERT_EQ(sb.status, SolveStatus::kConverged) << sb.detail;
    EXPECT_EQ(sa.detail, sb.detail);
    EXPECT_EQ(sa.newton_steps, sb.newton_steps);
    EXPECT_EQ(sa.max_kcl_residual, sb.max_kcl_residual);
    ExpectSameSolution(a, b);
    const std::vector<double> start((*kept)->unknowns().begin(), (*kept)->unknowns().end());
    const std::vector<double> single_x((*single)->unknowns().begin(), (*single)->unknowns().end());
    EXPECT_TRUE(SameBits(start, single_x));

    const WeightedQuantity w{{QuantityKind::kElementCurrent, 1}, 1.0};
    CircuitGradient ga, gb;
    ASSERT_TRUE((*kept)->Sensitivity({&w, 1}, &ga).ok());
    ASSERT_TRUE((*single)->Sensitivity({&w, 1}, &gb).ok());
    for (const SensitivityTarget& t : SensitivityTargets(c)) {
      EXPECT_CLOSE(gb.At(t), ga.At(t), 1e-9, 1e-18);
    }

    c.elements[static_cast<size_t>(c.FindElement("V1"))].value *= 1.1;
    (*kept)->UpdateValues(c);
    (*single)->UpdateValues(c);
    Solution wa, wb;
    ASSERT_EQ((*kept)->Solve(&wa, start).status, SolveStatus::kConverged);
    ASSERT_EQ((*single)->Solve(&wb, start).status, SolveStatus::kConverged);
    for (size_t n = 0; n < c.nodes.size(); ++n) {
      EXPECT_CLOSE(wb.node_voltage[n], wa.node_voltage[n], 1e-12, 1e-15);
    }
  }
}

}  // namespace
}  // namespace knee
