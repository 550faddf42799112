// The quick slice of the convergence torture suite (the full run: scripts/torture).
#include <gtest/gtest.h>

#include <cmath>
#include <set>

#include "torture/network_generator.h"
#include "torture/torture_case.h"
#include "torture/verify_solution.h"

namespace knee::torture {
namespace {

TEST(NetworkGenerator, SameSeedSameCircuit) {
  const Circuit a = GenerateNetwork(42);
  const Circuit b = GenerateNetwork(42);
  ASSERT_EQ(a.elements.size(), b.elements.size());
  for (size_t k = 0; k < a.elements.size(); ++k) {
    EXPECT_EQ(a.elements[k].name, b.elements[k].name);
    EXPECT_EQ(a.elements[k].value, b.elements[k].value);
  }
  EXPECT_EQ(a.nodes, b.nodes);
}

TEST(NetworkGenerator, DrawsEveryStructureAndPassesTopology) {
  std::set<ElementKind> kinds;
  int anti_parallel = 0;
  for (uint64_t seed = 1; seed <= 200; ++seed) {
    const Circuit c = GenerateNetwork(seed);
    EXPECT_TRUE(CheckTopology(c).empty()) << "seed " << seed;
    for (const Element& e : c.elements) {
      kinds.insert(e.kind);
      EXPECT_NE(e.node_a, e.node_b) << "seed " << seed << " " << e.name;
    }
    for (const Element& e : c.elements) {
      for (const Element& f : c.elements) {
        if (e.kind == ElementKind::kDiode && f.kind == ElementKind::kDiode &&
            e.node_a == f.node_b && e.node_b == f.node_a) {
          ++anti_parallel;
        }
      }
    }
  }
  EXPECT_EQ(kinds.size(), 4u);
  EXPECT_GT(anti_parallel, 0);
}

TEST(NetworkGenerator, RespectsParameterRanges) {
  GeneratorOptions o;
  for (uint64_t seed = 1; seed <= 200; ++seed) {
    const Circuit c = GenerateNetwork(seed, o);
    for (const Part& p : c.parts) {
      EXPECT_GE(p.model.sat_current, o.min_sat_current * (1 - 1e-12));
      EXPECT_LE(p.model.sat_current, o.max_sat_current * (1 + 1e-12));
      EXPECT_GE(p.model.ideality, o.min_ideality);
      EXPECT_LE(p.model.ideality, o.max_ideality);
      EXPECT_LE(p.model.series_res, o.max_series_res * (1 + 1e-12));
      if (p.model.breakdown_v) {
        EXPECT_LE(*p.model.breakdown_v, o.max_breakdown_v * (1 + 1e-12));
      }
    }
    for (const Element& e : c.elements) {
      if (e.kind == ElementKind::kResistor) {
        EXPECT_GE(e.value, o.min_res * (1 - 1e-12));
        EXPECT_LE(e.value, o.max_res * (1 + 1e-12));
      }
      if (e.kind == ElementKind::kVoltageSource) {
        EXPECT_LE(std::fabs(e.value), o.max_source_volts * (1 + 1e-12));
      }
    }
  }
}

// The verifier must reject a wrong answer, or it proves nothing.
TEST(VerifySolution, RejectsPerturbedSolution) {
  const Circuit c = GenerateNetwork(7);
  Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(c, {});
  ASSERT_TRUE(solver.ok());
  Solution s;
  ASSERT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
  ASSERT_TRUE(VerifySolution(c, s).ok) << VerifySolution(c, s).problem;
  for (size_t k = 0; k < c.elements.size(); ++k) {
    Solution bad = s;
    bad.element_current[k] += 1e-3 + 1e-3 * std::fabs(bad.element_current[k]);
    EXPECT_FALSE(VerifySolution(c, bad).ok) << c.elements[k].name;
  }
}

// Shockley term at Vj = n*Vt*ln(2): exactly Is (exp - 1 = 1), at T = ref_temp.
TEST(VerifySolution, ContractLawAtAKnownPoint) {
  DiodeModel m;
  m.sat_current = 1e-12;
  m.ideality = 2.0;
  const double vt = 1.380649e-23 * 298.15 / 1.602176634e-19;
  EXPECT_NEAR(ContractDiodeCurrent(m, 3.0, 25.0, 2.0 * vt * std::log(2.0)), 3e-12, 1e-24);
}

class TortureSlice : public ::testing::TestWithParam<int> {};

// The quick slice of the torture run (scripts/torture runs 10,000): every network
// converges and its solution passes the independent check.
TEST_P(TortureSlice, ConvergesAndVerifies) {
  // 125 seeds per shard, 8 shards: 1,000 networks, spread over ctest's parallel jobs.
  const uint64_t first = 1 + 125 * static_cast<uint64_t>(GetParam());
  for (uint64_t seed = first; seed < first + 125; ++seed) {
    const CaseResult r = RunCase(seed, {});
    EXPECT_TRUE(r.ok) << "seed " << seed << ": " << r.problem;
  }
}
INSTANTIATE_TEST_SUITE_P(Seeds, TortureSlice, ::testing::Range(0, 8));

}  // namespace
}  // namespace knee::torture
