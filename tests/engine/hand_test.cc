// The simplified diode models and their state search (engine/src/hand_*.cc) on
// hand-built circuits: closed forms, known state sets, the tangent model's first-order
// agreement with the exact solution, and circuits without a consistent state set.
#include "knee/hand.h"

#include <gtest/gtest.h>

#include <cmath>

#include "circuit_builder.h"
#include "knee/diode_law.h"
#include "knee/solver.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::CircuitBuilder;

Solution Exact(const Circuit& c, bool tight = false) {
  EXPECT_TRUE(CheckTopology(c).empty());
  SolverOptions o;
  if (tight) {
    o.abs_voltage_tol = 1e-13;
    o.abs_current_tol = 1e-16;
    o.rel_tol = 1e-12;
    o.verify_current_tol = 1e-13;
  }
  auto solver = BiasSolver::Create(c, o);
  EXPECT_TRUE(solver.ok());
  Solution s;
  if (!solver.ok()) return s;
  const SolveSummary summary = (*solver)->Solve(&s);
  EXPECT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  return s;
}

// The model's one answer (the test fails when there is none).
HandSolution Answer(const Circuit& c, const HandModel& m, HandSearchOptions o = {}) {
  HandResult r = SolveHand(c, m, o);
  EXPECT_TRUE(HasAnswer(r.status)) << ToString(r.status) << ": " << r.detail;
  if (!HasAnswer(r.status)) return {};
  return r.solutions.front();
}

DiodeModel Small() {
  DiodeModel m;
  m.sat_current = 1e-14;
  m.ideality = 1.0;
  return m;
}

// One diode and a resistor from a 5 V source.
TEST(HandModels, SingleDiodeConstantDropAndBracket) {
  CircuitBuilder b;
  const int p = b.Part("P", Small());
  b.V("V1", "in", "gnd", 5.0);
  b.R("R1", "in", "a", 1e3);
  const int d = b.D("D1", "a", "gnd", p);
  const Circuit& c = b.circuit();

  const HandSolution drop = Answer(c, MakeConstantDropModel(c, 0.7));
  // Constant drop: I = (V - Von) / R, Kirchhoff's voltage law on one loop (closed form).
  EXPECT_CLOSE(drop.solution.element_current[d], (5.0 - 0.7) / 1e3, 1e-14, 0.0);
  EXPECT_EQ(drop.states[d], DiodeState::kOn);
  EXPECT_CLOSE(drop.solution.node_voltage[b.Node("a")], 0.7, 1e-14, 0.0);

  const HandSolution ideal = Answer(c, MakeIdealModel(c));
  EXPECT_CLOSE(ideal.solution.element_current[d], 5.0 / 1e3, 1e-14, 0.0);

  // With V well above Von the exact drop lies between 0 and Von, so the exact current
  // lies between the two simplified answers (common practice, no source).
  const Solution exact = Exact(c);
  EXPECT_GT(exact.element_current[d], drop.solution.element_current[d]);
  EXPECT_LT(exact.element_current[d], ideal.solution.element_current[d]);
  EXPECT_EQ(ExactState(c, d, exact.junction_voltage[d]), DiodeState::kOn);
}

// A diode whose cathode sits at 10 V above its anode's clamp: it must block, while the
// clamp diode to ground conducts.
TEST(HandModels, ReverseBiasedBranchBlocks) {
  CircuitBuilder b;
  const int p = b.Part("P", Small());
  b.V("V1", "in", "gnd", 5.0);
  b.V("V2", "hi", "gnd", 10.0);
  b.R("R1", "in", "a", 1e3);
  const int d_clamp = b.D("Dclamp", "a", "gnd", p);
  const int d_block = b.D("Dblock", "a", "hi", p);
  const Circuit& c = b.circuit();
  const Solution exact = Exact(c);
  EXPECT_EQ(ExactState(c, d_clamp, exact.junction_voltage[d_clamp]), DiodeState::kOn);
  EXPECT_EQ(ExactState(c, d_block, exact.junction_voltage[d_block]), DiodeState::kOff);
  for (const HandModel& m :
       {MakeIdealModel(c), MakeConstantDropModel(c, 0.7), MakeDropResistanceModel(c, 0.7, 10.0)}) {
    HandResult r = SolveHand(c, m, {});
    ASSERT_EQ(r.status, HandStatus::kUnique) << ToString(m.kind) << ": " << r.detail;
    EXPECT_EQ(r.sets_tried, 4);
    EXPECT_EQ(r.solutions[0].states[d_clamp], DiodeState::kOn) << ToString(m.kind);
    EXPECT_EQ(r.solutions[0].states[d_block], DiodeState::kOff) << ToString(m.kind);
    EXPECT_EQ(r.solutions[0].solution.element_current[d_block], 0.0);
  }
  // Drop plus resistance: I = (5 - 0.7) / (1k + 10), one loop (closed form).
  const HandSolution pwl = Answer(c, MakeDropResistanceModel(c, 0.7, 10.0));
  EXPECT_CLOSE(pwl.solution.element_current[d_clamp], 4.3 / 1010.0, 1e-13, 0.0);
}

// Textbook-style problem (structure recalled from memory; numbers derived here by hand):
// +10 V -- 10k -- B; D1 from B to gnd; D2 from B to C; 5k from C to -10 V. Guessing both
// on gives I(D1) = 1 mA - 2 mA < 0, so D1 blocks: with D2 on (ideal) B = C and
// (10 - B)/10k = (B + 10)/5k -> B = -10/3 V, I(D2) = 4/3 mA. With a 0.7 V drop:
// (10 - B)/10k = (B - 0.7 + 10)/5k -> B = -2.8667 V.
TEST(HandModels, TextbookTwoDiodesOneMustBlock) {
  CircuitBuilder b;
  const int p = b.Part("P", Small());
  b.V("Vp", "p", "gnd", 10.0);
  b.V("Vn", "n", "gnd", -10.0);
  b.R("R1", "p", "B", 10e3);
  const int d1 = b.D("D1", "B", "gnd", p);
  const int d2 = b.D("D2", "B", "C", p);
  b.R("R2", "C", "n", 5e3);
  const Circuit& c = b.circuit();

  const HandSolution ideal = Answer(c, MakeIdealModel(c));
  EXPECT_EQ(ideal.states[d1], DiodeState::kOff);
  EXPECT_EQ(ideal.states[d2], DiodeState::kOn);
  EXPECT_CLOSE(ideal.solution.node_voltage[b.Node("B")], -10.0 / 3.0, 1e-12, 0.0);
  EXPECT_CLOSE(ideal.solution.element_current[d2], 4.0 / 3.0 * 1e-3, 1e-12, 0.0);

  const HandSolution drop = Answer(c, MakeConstantDropModel(c, 0.7));
  EXPECT_EQ(drop.states[d1], DiodeState::kOff);
  EXPECT_CLOSE(drop.solution.node_voltage[b.Node("B")], -8.6 / 3.0, 1e-12, 0.0);

  const Solution exact = Exact(c);
  EXPECT_EQ(ExactState(c, d1, exact.junction_voltage[d1]), DiodeState::kOff);
  EXPECT_EQ(ExactState(c, d2, exact.junction_voltage[d2]), DiodeState::kOn);

  // The iterative search (forced by a limit of 1 set), started from "both on", reaches
  // the same set and says uniqueness was not checked.
  HandSearchOptions o;
  o.max_enumerated_sets = 1;
  o.start.assign(c.elements.size(), DiodeState::kOn);
  HandResult r = SolveHand(c, MakeIdealModel(c), o);
  ASSERT_EQ(r.status, HandStatus::kFound) << r.detail;
  EXPECT_FALSE(r.exhaustive);
  EXPECT_EQ(r.solutions[0].states[d1], DiodeState::kOff);
  EXPECT_EQ(r.solutions[0].states[d2], DiodeState::kOn);
}

// Bridge rectifier (common practice, no source): with the input positive, the diodes
// from ac_a to out and from ret to ac_b conduct, the other two block; the load sees the
// input less two drops.
TEST(HandModels, BridgeRectifierConductingPair) {
  DiodeModel rect;
  rect.sat_current = 10e-9;
  rect.ideality = 1.75;
  rect.series_res = 0.05;
  CircuitBuilder b;
  const int p = b.Part("rect", rect);
  b.V("Vin", "ac_a", "ac_b", 12.0);
  b.R("Rref", "ac_b", "gnd", 1e6);
  const int d1 = b.D("D1", "ac_a", "out", p);
  const int d2 = b.D("D2", "ac_b", "out", p);
  const int d3 = b.D("D3", "ret", "ac_a", p);
  const int d4 = b.D("D4", "ret", "ac_b", p);
  const int load = b.R("Rload", "out", "ret", 47.0);
  b.R("Rgnd", "ret", "gnd", 1e6);
  const Circuit& c = b.circuit();
  const HandSolution drop = Answer(c, MakeConstantDropModel(c, 0.7));
  EXPECT_EQ(drop.states[d1], DiodeState::kOn);
  EXPECT_EQ(drop.states[d4], DiodeState::kOn);
  EXPECT_EQ(drop.states[d2], DiodeState::kOff);
  EXPECT_EQ(drop.states[d3], DiodeState::kOff);
  EXPECT_CLOSE(drop.solution.element_current[load], (12.0 - 1.4) / 47.0, 1e-9, 0.0);
  const Solution exact = Exact(c);
  for (int d : {d1, d2, d3, d4}) {
    EXPECT_EQ(ExactState(c, d, exact.junction_voltage[d]), drop.states[d]) << d;
  }
}

// Shunt reference (common practice, no source): 12 V -- 330 Ohm -- ref, a 5.1 V
// breakdown diode from gnd to ref, 1k load. The diode sits in breakdown at ref = Vbr and
// carries (12 - 5.1)/330 - 5.1/1k in reverse.
TEST(HandModels, ShuntReferenceInBreakdown) {
  DiodeModel z;
  z.sat_current = 1e-12;
  z.ideality = 1.2;
  z.series_res = 8;
  z.breakdown_v = 5.1;
  z.breakdown_i = 5e-3;
  CircuitBuilder b;
  const int p = b.Part("Z", z);
  b.V("Vraw", "raw", "gnd", 12.0);
  b.R("Rser", "raw", "ref", 330.0);
  const int dz = b.D("Dz", "gnd", "ref", p);
  b.R("Rload", "ref", "gnd", 1e3);
  const Circuit& c = b.circuit();
  HandResult r = SolveHand(c, MakeIdealModel(c), {});
  ASSERT_EQ(r.status, HandStatus::kUnique) << r.detail;
  EXPECT_EQ(r.sets_tried, 3);
  EXPECT_EQ(r.solutions[0].states[dz], DiodeState::kBreakdown);
  EXPECT_CLOSE(r.solutions[0].solution.node_voltage[b.Node("ref")], 5.1, 1e-12, 0.0);
  EXPECT_CLOSE(r.solutions[0].solution.element_current[dz], -((12 - 5.1) / 330 - 5.1 / 1e3), 1e-12,
               0.0);
  const Solution exact = Exact(c);
  EXPECT_EQ(ExactState(c, dz, exact.junction_voltage[dz]), DiodeState::kBreakdown);
}

// An ideal diode forward across an ideal 1 V source: 'on' makes a loop of voltage
// sources (1 V against 0 V: undetermined), 'off' sees 1 V > 0 V. No consistent set.
TEST(HandModels, NoConsistentSetIsReported) {
  CircuitBuilder b;
  const int p = b.Part("P", Small());
  b.V("V1", "a", "gnd", 1.0);
  b.D("D1", "a", "gnd", p);
  const Circuit& c = b.circuit();
  HandResult r = SolveHand(c, MakeIdealModel(c), {});
  EXPECT_EQ(r.status, HandStatus::kNoConsistent);
  EXPECT_FALSE(HasAnswer(r.status));
  EXPECT_EQ(r.sets_tried, 2);
  EXPECT_EQ(r.singular_sets, 1);
  EXPECT_NE(r.detail.find("none of the 2 state sets is consistent"), std::string::npos) << r.detail;
  // The iterative search also terminates and says it found nothing.
  HandSearchOptions o;
  o.max_enumerated_sets = 1;
  HandResult it = SolveHand(c, MakeIdealModel(c), o);
  EXPECT_EQ(it.status, HandStatus::kNoConsistent);
  EXPECT_LE(it.sets_tried, 2);
}

// Two identical ideal diodes in parallel: one on and the other off, or the reverse, give
// the same node voltages; both on is a loop of 0 V sources. Reported as equivalent sets.
TEST(HandModels, EquivalentSetsAreNamed) {
  CircuitBuilder b;
  const int p = b.Part("P", Small());
  b.V("V1", "in", "gnd", 5.0);
  b.R("R1", "in", "a", 1e3);
  b.D("Da", "a", "gnd", p);
  b.D("Db", "a", "gnd", p);
  const Circuit& c = b.circuit();
  HandResult r = SolveHand(c, MakeConstantDropModel(c, 0.7), {});
  EXPECT_EQ(r.status, HandStatus::kEquivalent) << r.detail;
  EXPECT_EQ(r.consistent_sets, 2);
  EXPECT_TRUE(HasAnswer(r.status));
  EXPECT_CLOSE(r.solutions[0].solution.node_voltage[b.Node("a")], 0.7, 1e-14, 0.0);
}

// PointAtCurrent inverts the diode law: the junction current at the returned point is the
// requested one, and the slope matches 1/g + Rs (docs/model.md).
TEST(HandModels, PointAtCurrentInvertsTheLaw) {
  DiodeModel m = Small();
  m.series_res = 2.0;
  m.breakdown_v = 6.0;
  CircuitBuilder b;
  const int p = b.Part("P", m);
  b.V("V1", "a", "gnd", 1.0);
  const int d = b.D("D1", "a", "gnd", p);
  const Circuit& c = b.circuit();
  const DiodeConstants k = ComputeDiodeConstants(m, 1.0, 25.0);
  for (double i : {1e-6, 1e-3, 0.2, -1e-6, -1e-3}) {
    Result<CurvePoint> pt = PointAtCurrent(c, d, i);
    ASSERT_TRUE(pt.ok());
    const double vj = pt->voltage - i * k.rs;
    const JunctionPoint jp = EvaluateJunction(k, vj);
    EXPECT_CLOSE(jp.current, i, 1e-9, 0.0) << i;
    EXPECT_CLOSE(pt->slope, 1.0 / jp.conductance + k.rs, 1e-9, 0.0) << i;
  }
  // Without breakdown the reverse branch saturates at -Is.
  DiodeModel plain = Small();
  CircuitBuilder b2;
  const int p2 = b2.Part("P", plain);
  b2.V("V1", "a", "gnd", 1.0);
  const int d2 = b2.D("D1", "a", "gnd", p2);
  EXPECT_FALSE(PointAtCurrent(b2.circuit(), d2, -1e-3).ok());
}

// The tangent model fitted at each diode's exact current reproduces the exact bias point,
// and moving a source by delta leaves an error of order delta^2 (Taylor's theorem: the
// tangent matches the curve's value and slope, so the error is second order).
TEST(HandModels, TangentAtExactCurrentIsFirstOrderExact) {
  DiodeModel m;
  m.sat_current = 4e-9;
  m.ideality = 1.9;
  m.series_res = 0.8;
  CircuitBuilder b;
  const int p = b.Part("P", m);
  const int vs = b.V("V1", "in", "gnd", 6.0);
  b.R("R1", "in", "a", 1e3);
  const int d1 = b.D("D1", "a", "gnd", p);
  b.R("R2", "a", "b", 220.0);
  const int d2 = b.D("D2", "b", "gnd", p);
  Circuit c = b.circuit();
  const Solution exact0 = Exact(c, true);
  std::vector<double> at(c.elements.size(), 0.0);
  at[d1] = exact0.element_current[d1];
  at[d2] = exact0.element_current[d2];
  Result<HandModel> tangent = MakeTangentModel(c, at);
  ASSERT_TRUE(tangent.ok());
  const HandSolution same = Answer(c, *tangent);
  EXPECT_CLOSE(same.solution.node_voltage[b.Node("a")], exact0.node_voltage[b.Node("a")], 1e-9,
               0.0);
  EXPECT_CLOSE(same.solution.element_current[d2], exact0.element_current[d2], 1e-8, 0.0);

  double previous = 0;
  for (double delta : {0.8, 0.4, 0.2, 0.1}) {
    c.elements[vs].value = 6.0 + delta;
    const Solution exact = Exact(c, true);
    const HandSolution hand = Answer(c, *tangent);
    const double error =
        std::fabs(hand.solution.node_voltage[b.Node("a")] - exact.node_voltage[b.Node("a")]);
    EXPECT_GT(error, 0.0);
    if (previous > 0) {
      const double ratio = previous / error;  // 4 for a second-order error
      EXPECT_GT(ratio, 3.5) << "delta " << delta;
      EXPECT_LT(ratio, 4.5) << "delta " << delta;
    }
    previous = error;
  }
}

// Conducting, as defined for the comparison: beyond 10 n Vt forward, or within
// 10 nbr Vt of -Vbr in reverse.
TEST(HandModels, ExactStateThresholds) {
  DiodeModel m = Small();
  m.breakdown_v = 5.0;
  CircuitBuilder b;
  const int p = b.Part("P", m);
  b.V("V1", "a", "gnd", 1.0);
  const int d = b.D("D1", "a", "gnd", p);
  const double vt = ThermalVoltage(ToKelvin(25.0));
  EXPECT_EQ(ExactState(b.circuit(), d, 10.5 * vt), DiodeState::kOn);
  EXPECT_EQ(ExactState(b.circuit(), d, 9.5 * vt), DiodeState::kOff);
  EXPECT_EQ(ExactState(b.circuit(), d, -5.0 + 9.5 * vt), DiodeState::kBreakdown);
  EXPECT_EQ(ExactState(b.circuit(), d, -5.0 + 10.5 * vt), DiodeState::kOff);
}

// A chain of `n` diodes in series from a source of `volts` into a 1 kOhm load.
Circuit DiodeChain(int n, double volts) {
  DiodeModel part;
  CircuitBuilder b;
  const int p = b.Part("chain", part);
  b.V("V1", "n0", "gnd", volts);
  for (int k = 0; k < n; ++k) {
    b.D("D" + std::to_string(k + 1), "n" + std::to_string(k), "n" + std::to_string(k + 1), p);
  }
  b.R("RL", "n" + std::to_string(n), "gnd", 1e3);
  return b.circuit();
}

// A long chain is solved by the sparse factorisation: with every diode conducting under
// the constant-drop model, Kirchhoff's voltage law (common practice, no source) gives the
// load current (V - n * 0.7 V) / 1 kOhm and each node 0.7 V below the one before.
TEST(HandModels, LongChainSolvedSparse) {
  const int n = 2000;
  const Circuit c = DiodeChain(n, 2000.0);
  HandSearchOptions o;
  o.start.assign(c.elements.size(), DiodeState::kOn);
  const HandResult r = SolveHand(c, MakeConstantDropModel(c, 0.7), o);
  ASSERT_EQ(r.status, HandStatus::kFound) << r.detail;
  EXPECT_EQ(r.sets_tried, 1);
  const Solution& s = r.solutions.front().solution;
  EXPECT_CLOSE(s.element_current.back(), (2000.0 - n * 0.7) / 1e3, 1e-12, 1e-9);
  for (int k = 0; k <= n; k += 250) {
    EXPECT_CLOSE(s.node_voltage[static_cast<size_t>(k) + 1], 2000.0 - 0.7 * k, 1e-9, 1e-9) << k;
  }
}

// The search's work is bounded by sets tried times the network's size: a chain started
// with every diode blocking leaves its nodes undetermined set after set, and the search
// stops at the limit with a reason instead of running on.
TEST(HandModels, SearchStopsAtItsWorkLimit) {
  const Circuit c = DiodeChain(300, 300.0);
  HandSearchOptions o;
  o.start.assign(c.elements.size(), DiodeState::kOff);
  const auto size = static_cast<long long>(c.nodes.size() + c.elements.size());
  o.max_work = 12 * size;
  const HandResult r = SolveHand(c, MakeConstantDropModel(c, 0.7), o);
  EXPECT_EQ(r.status, HandStatus::kNoConsistent);
  EXPECT_TRUE(r.work_limit_reached);
  EXPECT_EQ(r.sets_tried, 12);
  EXPECT_NE(r.detail.find("work limit"), std::string::npos) << r.detail;

  // Without the limit the same search goes on past it (it is the limit that stopped it).
  o.max_work = HandSearchOptions().max_work;
  const HandResult free = SolveHand(c, MakeConstantDropModel(c, 0.7), o);
  EXPECT_FALSE(free.work_limit_reached);
  EXPECT_GT(free.sets_tried, 12);
}

}  // namespace
}  // namespace knee
