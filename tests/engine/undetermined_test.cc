// The undetermined-node test (engine/src/undetermined.h): silent where every node has a
// resistive path of at most 1 GOhm to gnd, named where a stray current of the tolerance
// moves a node by more than kUndeterminedVolts.
#include "undetermined.h"

#include <gtest/gtest.h>

#include <cstdint>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "circuit_builder.h"
#include "klu_solver.h"
#include "knee/solver.h"
#include "mna.h"
#include "solve_with.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::CircuitBuilder;
using testing::SolveWith;

class Undetermined : public ::testing::TestWithParam<SolverMethod> {};

// A mains bridge (325 V peak) into 10 kOhm, every node but L bled to gnd by `bleed`: the
// common mode of the bridge is held by the three bleeds in parallel.
Circuit BleedBridge(double bleed) {
  CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 10e-9;
  m.ideality = 1.75;
  m.series_res = 0.05;
  m.breakdown_v = 1000;
  const int rect = b.Part("rect", m);
  b.V("Vin", "L", "N", 325.0);
  b.D("D1", "L", "pos", rect);
  b.D("D2", "N", "pos", rect);
  b.D("D3", "neg", "L", rect);
  b.D("D4", "neg", "N", rect);
  b.R("Rload", "pos", "neg", 10e3);
  b.R("RbN", "N", "gnd", bleed);
  b.R("RbP", "pos", "gnd", bleed);
  b.R("RbM", "neg", "gnd", bleed);
  return b.circuit();
}

// Every node has a resistive path to gnd of at most 1 GOhm (through Vin for L): its
// driving-point resistance is at most that path's (Rayleigh's monotonicity), so a stray
// 1 pA moves it by at most 1 mV < kUndeterminedVolts.
TEST_P(Undetermined, BridgeWithTenMegohmBleedsHasNone) {
  Solution s;
  const SolveSummary summary = SolveWith(BleedBridge(10e6), GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_TRUE(summary.undetermined_nodes.empty());
}

TEST_P(Undetermined, BridgeWithOneGigohmBleedsHasNone) {
  Solution s;
  const SolveSummary summary = SolveWith(BleedBridge(1e9), GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_TRUE(summary.undetermined_nodes.empty());
}

// With 100 GOhm bleeds the common mode is held by 33 GOhm: a stray 1 pA moves every node
// of the bridge by 33 mV, beyond kUndeterminedVolts.
TEST_P(Undetermined, BridgeWithHundredGigohmBleedsIsNamed) {
  Solution s;
  const SolveSummary summary = SolveWith(BleedBridge(100e9), GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_EQ(summary.undetermined_nodes, (std::vector<std::string>{"L", "N", "pos", "neg"}));
}

// kChainNodes nodes joined in a chain by 1 kOhm, the last held to gnd by `bleed` Ohm,
// and a current `source` A into the first.
constexpr int kChainNodes = 40;
Circuit ChainOnBleed(double source, double bleed) {
  CircuitBuilder b;
  b.I("I1", "gnd", "c0", source);
  for (int k = 0; k + 1 < kChainNodes; ++k) {
    b.R("R" + std::to_string(k), "c" + std::to_string(k), "c" + std::to_string(k + 1), 1e3);
  }
  b.R("Rbleed", "c" + std::to_string(kChainNodes - 1), "gnd", bleed);
  return b.circuit();
}

// Forty nodes joined in a chain by 1 kOhm, the last held to gnd by 1 GOhm, and a 1 uA
// source into the first: every node's path to gnd is at most 1.00004 GOhm. The row sum
// of the inverse Jacobian (forty picoamperes, one into every node, through the 1 GOhm)
// moves the chain by 40 mV; a single stray picoampere, by 1 mV. The test judges by the
// latter (the driving-point solve after the screen), so none is named.
TEST_P(Undetermined, LongChainOnOneGigohmHasNone) {
  Solution s;
  const SolveSummary summary = SolveWith(ChainOnBleed(1e-6, 1e9), GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_TRUE(summary.undetermined_nodes.empty());
}

// The same chain on 4 GOhm: 4 mV per stray picoampere, beyond kUndeterminedVolts (2.6 mV),
// at every node.
TEST_P(Undetermined, LongChainOnFourGigohmIsNamed) {
  Solution s;
  const SolveSummary summary = SolveWith(ChainOnBleed(1e-9, 4e9), GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_EQ(summary.undetermined_nodes.size(), static_cast<size_t>(kChainNodes));
}

// A node held only by the leakage of 1e-20 A junctions (one to a 1 V supply, one to gnd,
// both reverse biased, a forward-biased partner elsewhere held by a resistor): its
// driving-point resistance is about n*Vt / 1e-20 A, 2.6e18 Ohm. Only that node is named.
TEST_P(Undetermined, LeakageHeldNodeIsNamedAndItsNeighboursAreNot) {
  CircuitBuilder b;
  const int tiny = b.Part("tiny", 1e-20, 1.0);
  const int normal = b.Part("normal", 1e-14, 1.0);
  b.V("V1", "vdd", "gnd", 1.0);
  b.D("Dup", "x", "vdd", tiny);  // reverse
  b.D("Ddn", "gnd", "x", tiny);  // reverse
  b.R("R1", "vdd", "a", 1e3);
  b.D("Dfwd", "a", "gnd", normal);
  Solution s;
  const SolveSummary summary = SolveWith(b.circuit(), GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_EQ(summary.undetermined_nodes, (std::vector<std::string>{"x"}));
}

// Two matched strings of two reverse-biased junctions in series across 20 V, with nothing
// else at their midpoints: how the strings share the voltage depends on leakage alone.
TEST_P(Undetermined, MatchedReverseStringsAreNamed) {
  CircuitBuilder b;
  const int part = b.Part("leak", 1e-12, 1.0);
  b.V("V1", "top", "gnd", 20.0);
  b.D("D1", "m1", "top", part);
  b.D("D2", "gnd", "m1", part);
  b.D("D3", "m2", "top", part);
  b.D("D4", "gnd", "m2", part);
  b.R("Rload", "top", "gnd", 1e3);
  Solution s;
  const SolveSummary summary = SolveWith(b.circuit(), GetParam(), &s);
  ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
  EXPECT_EQ(summary.undetermined_nodes, (std::vector<std::string>{"m1", "m2"}));
}

// The latitude itself on a linear chain: node c_j of forty nodes joined by 1 kOhm, the last
// on 1 GOhm to gnd, has the driving-point resistance 1 GOhm + (39 - j) kOhm (resistors in
// series: Ohm's law, common practice, no source), so a stray 1 pA moves it by 1e-12 A
// times that. The screen's row sum (40 mV) does not clear any node, so every value is a
// driving-point solve; with fresh factors (the run's are not offered) in the probe.
TEST(UndeterminedLatitude, ChainMatchesSeriesResistance) {
  CircuitBuilder b;
  constexpr int kNodes = 40;
  b.I("I1", "gnd", "c0", 1e-6);
  for (int k = 0; k + 1 < kNodes; ++k) {
    b.R("R" + std::to_string(k), "c" + std::to_string(k), "c" + std::to_string(k + 1), 1e3);
  }
  b.R("Rbleed", "c" + std::to_string(kNodes - 1), "gnd", 1e9);
  const Circuit& c = b.circuit();
  internal::MnaSystem mna(c);
  std::vector<double> x(static_cast<size_t>(mna.size()), 0.0);
  mna.AssembleExact(x);
  internal::KluSolver unused;
  std::optional<internal::KluSolver> probe;
  internal::UndeterminedTest test;
  const SolverOptions options;
  const std::vector<int> named = test.Run(c, mna, x, options, unused, false, probe);
  EXPECT_TRUE(named.empty());
  ASSERT_EQ(test.latitude().size(), static_cast<size_t>(kChainNodes));
  for (int j = 0; j < kNodes; ++j) {
    const double z = 1e9 + (kNodes - 1 - j) * 1e3;
    // 1e-7: the chain's condition (1 mS against 1 nS over forty nodes, about 1e9) costs
    // that many ulps; consecutive nodes still differ by 1e-6 of their value.
    EXPECT_CLOSE(test.latitude()[static_cast<size_t>(j)], 1e-12 * z, 1e-7, 0.0) << j;
  }
}

// The bound the solver's screen rests on: with resistors tying every node to gnd, Z_kk is
// at most the sum R of all resistances (Rayleigh's monotonicity law, docs/solver.md)
// whatever the junctions add, and Z_kj <= Z_kk (the maximum principle), so every latitude
// the test computes (a row sum t * (Z 1)_k, or a driving point t * Z_kk) is at most
// t * n * R for n nodes. Random resistor trees with diodes across random node pairs, their
// t * n * R placed just below the screen's threshold and far above it: the test's
// latitudes stay within the bound, and below the threshold it names no node.
TEST(UndeterminedLatitude, StaysWithinTheScreensBound) {
  std::mt19937_64 bits(31);
  std::uniform_real_distribution<double> share(0.05, 1.0);
  const SolverOptions options;
  const double threshold =
      internal::kUndeterminedScreenShare * kUndeterminedVolts / options.abs_current_tol;
  int below = 0;
  for (int trial = 0; trial < 40; ++trial) {
    CircuitBuilder b;
    const int part = b.Part("P", 1e-12, 1.0);
    const int nodes = 3 + trial % 9;
    // n * (sum of resistances) = threshold * 0.9, or 3000 times the threshold.
    const double total = threshold * (trial % 2 == 0 ? 0.9 : 3000.0) / nodes;
    std::vector<double> r(static_cast<size_t>(nodes));
    double sum = 0;
    for (double& v : r) sum += v = share(bits);
    for (int k = 0; k < nodes; ++k) {
      const int parent = k == 0 ? -1 : static_cast<int>(bits() % static_cast<std::uint64_t>(k));
      b.R("R" + std::to_string(k), "n" + std::to_string(k),
          parent < 0 ? "gnd" : "n" + std::to_string(parent),
          r[static_cast<size_t>(k)] / sum * total);
      const int other = static_cast<int>(bits() % static_cast<std::uint64_t>(nodes + 1)) - 1;
      b.D("D" + std::to_string(k), "n" + std::to_string(k),
          other < 0 ? "gnd" : "n" + std::to_string(other), part);
    }
    b.I("I1", "gnd", "n0", 1e-9);
    const Circuit& c = b.circuit();
    Solution s;
    const SolveSummary summary = SolveWith(c, SolverMethod::kClassic, &s);
    ASSERT_EQ(summary.status, SolveStatus::kConverged) << summary.detail;
    internal::MnaSystem mna(c);
    std::vector<double> x(s.node_voltage.begin() + 1, s.node_voltage.end());
    x.resize(static_cast<size_t>(mna.size()), 0.0);
    mna.AssembleExact(x);
    internal::KluSolver unused;
    std::optional<internal::KluSolver> probe;
    internal::UndeterminedTest test;
    const std::vector<int> named = test.Run(c, mna, x, options, unused, false, probe);
    ASSERT_EQ(test.latitude().size(), static_cast<size_t>(nodes));
    for (double latitude : test.latitude()) {
      EXPECT_LE(latitude, options.abs_current_tol * total * nodes * (1 + 1e-9)) << trial;
    }
    if (total * nodes < threshold) {
      ++below;
      EXPECT_TRUE(named.empty()) << trial;
      EXPECT_TRUE(summary.undetermined_nodes.empty()) << trial;
    }
  }
  EXPECT_EQ(below, 20);
}

INSTANTIATE_TEST_SUITE_P(Solvers, Undetermined,
                         ::testing::Values(SolverMethod::kClassic, SolverMethod::kPotential),
                         [](const ::testing::TestParamInfo<SolverMethod>& param) {
                           return param.param == SolverMethod::kClassic ? "classic" : "potential";
                         });

}  // namespace
}  // namespace knee
