// Junctions that voltage sources alone hold (engine/src/forced_junctions.cc): beyond
// 1 MA, or beyond the doubles, the solve says so (status out of range) instead of
// printing a number; below it the law's value is the answer. Both ways are tested.
#include "forced_junctions.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "circuit_builder.h"
#include "knee/diode_law.h"
#include "knee/solver.h"
#include "solve_with.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::CircuitBuilder;
using testing::SolveWith;

constexpr SolverMethod kMethods[] = {SolverMethod::kAuto, SolverMethod::kClassic,
                                     SolverMethod::kPotential};

// The law's current of a 1e-14 A, n = 1 junction at 25 degC and vj (Shockley's law with
// the CODATA constants, netlist-format.md "Diode parameters").
double LawAt25(double vj) { return 1e-14 * std::expm1(vj / ThermalVoltage(298.15)); }

TEST(ForcedJunction, AcrossFiveVoltsIsOutOfRangeWithTheLawsCurrent) {
  CircuitBuilder b;
  const int part = b.Part("P", 1e-14, 1.0);
  b.V("V1", "a", "gnd", 5.0);
  b.D("D1", "a", "gnd", part);
  for (SolverMethod m : kMethods) {
    Solution s;
    const SolveSummary summary = SolveWith(b.circuit(), m, &s);
    EXPECT_EQ(summary.status, SolveStatus::kOutOfRange) << summary.detail;
    // 1e-14 A * e^(5 V / 25.69 mV) = 3.29e70 A (written out with mpmath, 50 digits).
    EXPECT_NE(summary.detail.find("D1 is across V1 with no resistance: its current would be "
                                  "3.3e70 A"),
              std::string::npos)
        << summary.detail;
    EXPECT_FALSE(summary.unique);
    EXPECT_EQ(summary.newton_steps, 0);
  }
}

TEST(ForcedJunction, BeyondTheDoublesIsSaidInDecades) {
  CircuitBuilder b;
  const int part = b.Part("P", 1e-14, 1.0);
  b.V("V1", "a", "gnd", 20.0);
  b.D("D1", "a", "gnd", part);
  Solution s;
  const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
  EXPECT_EQ(summary.status, SolveStatus::kOutOfRange);
  // 1e-14 A * e^(20 V / 25.69 mV) = 1.17e324 A (mpmath, 50 digits): above DBL_MAX.
  EXPECT_NE(summary.detail.find("its current would be 1.2e324 A"), std::string::npos)
      << summary.detail;
}

TEST(ForcedJunction, ReverseBeyondBreakdownIsNegative) {
  CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-14;
  m.breakdown_v = 10.0;
  m.breakdown_i = 1e-3;
  m.breakdown_ideality = 1.0;
  m.breakdown_tc = 0.0;
  m.ref_temp = 25.0;
  const int part = b.Part("Z", m);
  b.V("V1", "a", "gnd", -12.0);
  b.D("D1", "a", "gnd", part);  // reverse biased by 12 V, 2 V past breakdown
  Solution s;
  const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
  EXPECT_EQ(summary.status, SolveStatus::kOutOfRange);
  // The contract's breakdown term: -1e-3 A * e^(2 V / 25.69 mV) = -6.41e30 A (mpmath, 50 digits).
  EXPECT_NE(summary.detail.find("its current would be -6.4e30 A"), std::string::npos)
      << summary.detail;
}

TEST(ForcedJunction, ChainOfSourcesIsNamed) {
  CircuitBuilder b;
  const int part = b.Part("P", 1e-14, 1.0);
  b.V("V1", "a", "b", 3.0);
  b.V("V2", "b", "gnd", 2.0);
  b.R("R1", "a", "gnd", 1e3);
  b.D("D1", "a", "gnd", part);
  Solution s;
  const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
  EXPECT_EQ(summary.status, SolveStatus::kOutOfRange);
  EXPECT_NE(summary.detail.find("D1 is across V1 and V2 in series with no resistance"),
            std::string::npos)
      << summary.detail;
}

// Silent where the circuit is ordinary: a forced junction at 0.7 V (6.8 mA), the same
// junction with series resistance across 5 V, and one fed through a resistor.
TEST(ForcedJunction, SilentBelowTheLimitOrWithResistance) {
  {
    CircuitBuilder b;
    const int part = b.Part("P", 1e-14, 1.0);
    b.V("V1", "a", "gnd", 0.7);
    b.D("D1", "a", "gnd", part);
    for (SolverMethod m : kMethods) {
      Solution s;
      const SolveSummary summary = SolveWith(b.circuit(), m, &s);
      ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
      EXPECT_CLOSE(s.element_current[1], LawAt25(0.7), 1e-12, 0.0);
    }
  }
  {
    CircuitBuilder b;
    DiodeModel m;
    m.sat_current = 1e-14;
    m.series_res = 0.5;
    const int part = b.Part("P", m);
    b.V("V1", "a", "gnd", 5.0);
    b.D("D1", "a", "gnd", part);
    Solution s;
    const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
    ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
    const double i = s.element_current[1];
    EXPECT_CLOSE(i, LawAt25(s.junction_voltage[1]), 1e-9, 0.0);
    EXPECT_CLOSE(s.junction_voltage[1] + 0.5 * i, 5.0, 1e-12, 0.0);
  }
  {
    CircuitBuilder b;
    const int part = b.Part("P", 1e-14, 1.0);
    b.V("V1", "s", "gnd", 5.0);
    b.R("R1", "s", "a", 1e-3);
    b.D("D1", "a", "gnd", part);
    Solution s;
    const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
    ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
    EXPECT_CLOSE(s.element_current[2], LawAt25(s.junction_voltage[2]), 1e-9, 0.0);
  }
}

// A part whose saturation current at its temperature is beyond any diode's: out of range,
// with the part's numbers; the same part at 25 degC is an ordinary (if leaky) junction.
TEST(OutOfRangeSaturation, FiresAtFourHundredDegreesAndNotAtRoomTemperature) {
  DiodeModel m;
  m.sat_current = 1e-6;
  m.ideality = 0.5;
  m.bandgap = 0.66;
  m.sat_temp_exp = 3.0;
  m.ref_temp = 25.0;
  for (const double temp : {400.0, 25.0}) {
    CircuitBuilder b(temp);
    const int part = b.Part("Leaky", m);
    b.V("V1", "s", "gnd", 1.0);
    b.R("R1", "s", "a", 1e3);
    b.D("D1", "a", "gnd", part);
    Solution s;
    const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
    if (temp == 400.0) {
      EXPECT_EQ(summary.status, SolveStatus::kOutOfRange);
      // The contract's temperature law (4), written out with mpmath in 50 digits:
      // 1e-6 A * (673.15/298.15)^6 * exp(0.66 / (0.5 * Vt(298.15 K)) * (1 - 298.15/673.15))
      // = 3.56e8 A.
      EXPECT_NE(summary.detail.find("diode D1 (part Leaky) has a saturation current of 3.6e8 A"),
                std::string::npos)
          << summary.detail;
    } else {
      EXPECT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
    }
  }
}

// Two junctions in series across a source: each holds half of it, and only the junctions
// limit the loop's current. Across 5 V: 1e-14 A * e^(2.5 V / 25.69 mV) = 1.8e28 A by the
// law (mpmath), out of range; across 1.2 V: 139 uA, solved. A bridge fed by an ideal
// source has such loops (the source and two of its diodes) and solves as ever.
TEST(LoopJunction, SeriesJunctionsAcrossASourceBothWays) {
  for (const double volts : {5.0, 1.2}) {
    CircuitBuilder b;
    const int part = b.Part("P", 1e-14, 1.0);
    b.V("V1", "a", "gnd", volts);
    b.D("D1", "a", "m", part);
    b.D("D2", "m", "gnd", part);
    for (SolverMethod m : kMethods) {
      Solution s;
      const SolveSummary summary = SolveWith(b.circuit(), m, &s);
      if (volts == 5.0) {
        EXPECT_EQ(summary.status, SolveStatus::kOutOfRange) << summary.detail;
        EXPECT_NE(summary.detail.find("D1 is in a loop with V1 and D2 and no resistance: its "
                                      "current is 1.8e28 A"),
                  std::string::npos)
            << summary.detail;
      } else {
        ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
        EXPECT_CLOSE(s.element_current[1], LawAt25(0.6), 1e-9, 0.0);
      }
    }
  }
  CircuitBuilder b;
  const int part = b.Part("P", 1e-14, 1.0);
  b.V("V1", "a", "b", 10.0);
  b.D("D1", "a", "p", part);
  b.D("D2", "b", "p", part);
  b.D("D3", "m", "a", part);
  b.D("D4", "m", "b", part);
  b.R("Rload", "p", "m", 1e3);
  b.R("Rref", "m", "gnd", 1e6);
  EXPECT_EQ(internal::LoopJunctions(b.circuit()).size(), 4u);  // V1 with D1, D2 and D3, D4
  Solution s;
  const SolveSummary summary = SolveWith(b.circuit(), SolverMethod::kAuto, &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
}

// One solver across changes of numbers: no loop while series resistance is in it (also
// when only the source and the saturation current change), the loop found at once when
// the resistance is removed (the graph the loop test reads changed), and gone again when
// it comes back.
TEST(LoopJunction, FollowsTheSeriesResistanceAcrossUpdates) {
  CircuitBuilder b;
  const int part = b.Part("P", 1e-14, 1.0);
  b.V("V1", "a", "gnd", 5.0);
  b.D("D1", "a", "m", part);
  b.D("D2", "m", "gnd", part);
  b.R("Rm", "m", "gnd", 1e3);
  Circuit c = b.circuit();
  c.parts[0].model.series_res = 10.0;
  auto solver = BiasSolver::Create(c, {});
  ASSERT_TRUE(solver.ok());
  Solution s;
  EXPECT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
  c.parts[0].model.sat_current = 2e-14;
  c.elements[0].value = 5.5;
  (*solver)->UpdateValues(c);
  EXPECT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
  c.parts[0].model.series_res = 0.0;
  (*solver)->UpdateValues(c);
  const SolveSummary loop = (*solver)->Solve(&s);
  EXPECT_EQ(loop.status, SolveStatus::kOutOfRange) << loop.detail;
  EXPECT_NE(loop.detail.find("is in a loop with V1"), std::string::npos) << loop.detail;
  c.parts[0].model.series_res = 10.0;
  (*solver)->UpdateValues(c);
  EXPECT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
}

}  // namespace
}  // namespace knee
