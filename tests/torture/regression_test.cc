// Frozen torture networks (tests/torture/regression/seed-N.knee, written once by
// ToNetlist from the generator's seed N): each once broke a piece of the solver, named
// in kCases with the invariant it protects (the stories: docs/solver.md). As files they
// stay the same networks whatever later becomes of the generator.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "knee/netlist.h"
#include "knee/solver.h"
#include "torture/verify_solution.h"

namespace knee::torture {
namespace {

struct FrozenCase {
  const char* file;
  const char* protects;
  // The potential method alone ends at its step limit here (docs/solver.md, "Known
  // gaps"); auto solves it with the classic ladder.
  bool potential_gap = false;
};

const FrozenCase kCases[] = {
    {"seed-4725.knee", "an island is rooted at its member of the largest currents (mna.cc)"},
    {"seed-4912.knee", "a rejected polishing step is retried without its faint nodes' part"},
    {"seed-5185.knee", "loose nodes Newton leaves unsettled go to the potential method"},
    {"seed-10099.knee", "a polishing step larger than the one before is no stall"},
    {"seed-14210.knee", "an island whose root is far weaker than a member is re-rooted"},
    {"seed-17571.knee", "the potential method's polishing retries without faint nodes"},
    {"seed-18568.knee", "a direction that overflows counts as a singular Hessian"},
    {"seed-22537.knee", "a full step that repeats itself (creeping) lengthens the search", true},
    {"seed-27140.knee", "polishing ends on steps that no longer shrink, not before"},
    {"seed-37532.knee", "the loose-node run tightens the relative residual test too"},
    {"seed-45349.knee", "a vanishing step takes a vanishing share of the multipliers"},
    {"seed-58780.knee", "vanishing steps with the junction floor on grow the shift"},
};

Circuit ReadFrozen(const std::string& name) {
  const std::string path = std::string(KNEE_SOURCE_DIR) + "/tests/torture/regression/" + name;
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  auto netlist = ParseNetlist(text.str(), path);
  if (!netlist) ADD_FAILURE() << path << ": " << netlist.errors().front().message;
  auto design = Elaborate(*netlist, {});
  if (!design) ADD_FAILURE() << path << ": " << design.errors().front().message;
  return design ? design->circuit : Circuit{};
}

struct Solved {
  SolveSummary summary;
  Solution solution;
};

Solved SolveWith(const Circuit& c, SolverMethod method) {
  SolverOptions options;
  options.method = method;
  Solved out;
  auto solver = BiasSolver::Create(c, options);
  EXPECT_TRUE(solver.ok());
  if (solver) out.summary = (*solver)->Solve(&out.solution);
  return out;
}

// Nodes that carry some element current of at least `floor` in the solution.
std::vector<char> FirmNodes(const Circuit& c, const Solution& s, double floor) {
  std::vector<char> firm(c.nodes.size(), 0);
  for (size_t e = 0; e < c.elements.size(); ++e) {
    if (!(std::fabs(s.element_current[e]) >= floor)) continue;
    firm[static_cast<size_t>(c.elements[e].node_a)] = 1;
    firm[static_cast<size_t>(c.elements[e].node_b)] = 1;
  }
  return firm;
}

class FrozenNetwork : public ::testing::TestWithParam<FrozenCase> {};

// Every method converges, and its solution passes the independent check (KCL at every
// node from the element laws, verify_solution.h) with the residual it reports.
TEST_P(FrozenNetwork, EveryMethodSolvesAndVerifies) {
  const Circuit c = ReadFrozen(GetParam().file);
  ASSERT_FALSE(c.elements.empty());
  for (SolverMethod method :
       {SolverMethod::kClassic, SolverMethod::kPotential, SolverMethod::kAuto}) {
    if (method == SolverMethod::kPotential && GetParam().potential_gap) continue;
    const Solved r = SolveWith(c, method);
    EXPECT_EQ(r.summary.status, SolveStatus::kConverged)
        << GetParam().file << " (" << GetParam().protects << "): " << r.summary.detail;
    if (r.summary.status != SolveStatus::kConverged) continue;
    const Verification check = VerifySolution(c, r.solution);
    EXPECT_TRUE(check.ok) << GetParam().file << ": " << check.problem;
    EXPECT_TRUE(std::isfinite(r.summary.max_kcl_residual)) << GetParam().file;
  }
}

// Where KCL fixes a node (some element current of 1e-12 A, the default current
// tolerance, and neither solver names it loose), the classic ladder and the potential
// method (auto where the potential method alone has a known gap) agree to 1e-9 of the circuit's
// largest node voltage (the bound compare_solvers holds on the torture suite, docs/solver.md
// "Agreement").
TEST_P(FrozenNetwork, MethodsAgreeWhereKclFixesTheNode) {
  const Circuit c = ReadFrozen(GetParam().file);
  ASSERT_FALSE(c.elements.empty());
  const Solved a = SolveWith(c, SolverMethod::kClassic);
  const Solved b =
      SolveWith(c, GetParam().potential_gap ? SolverMethod::kAuto : SolverMethod::kPotential);
  ASSERT_EQ(a.summary.status, SolveStatus::kConverged);
  ASSERT_EQ(b.summary.status, SolveStatus::kConverged);
  const std::vector<char> firm_a = FirmNodes(c, a.solution, 1e-12);
  const std::vector<char> firm_b = FirmNodes(c, b.solution, 1e-12);
  const auto loose = [&](const std::string& name) {
    for (const auto* list : {&a.summary.undetermined_nodes, &b.summary.undetermined_nodes}) {
      if (std::find(list->begin(), list->end(), name) != list->end()) return true;
    }
    return false;
  };
  double largest = 0.0;
  for (double v : a.solution.node_voltage) largest = std::max(largest, std::fabs(v));
  for (size_t n = 1; n < c.nodes.size(); ++n) {
    if (!firm_a[n] || !firm_b[n] || loose(c.nodes[n])) continue;
    EXPECT_NEAR(a.solution.node_voltage[n], b.solution.node_voltage[n], 1e-9 * largest + 1e-12)
        << GetParam().file << " node " << c.nodes[n];
  }
}

INSTANTIATE_TEST_SUITE_P(Frozen, FrozenNetwork, ::testing::ValuesIn(kCases),
                         [](const ::testing::TestParamInfo<FrozenCase>& param) {
                           std::string name = param.param.file;
                           name = name.substr(0, name.find('.'));
                           std::replace(name.begin(), name.end(), '-', '_');
                           return name;
                         });

}  // namespace
}  // namespace knee::torture
