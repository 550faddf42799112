// The Newton hot path allocates nothing: assembly, refactorisation and solve only write
// numbers into storage fixed at setup. C++ allocations are counted by replacing the
// global operator new in this test binary (counting only). KLU allocates with malloc,
// which the counter does not see; klu_refactor and klu_solve do not allocate, only a full
// klu_factor does, so the test also checks that no full factorisation happened.
#include <gtest/gtest.h>

#include <atomic>
#include <cmath>
#include <cstdlib>
#include <new>
#include <vector>

#include "circuit_builder.h"
#include "klu_solver.h"
#include "knee/solver.h"
#include "mna.h"

namespace {
std::atomic<long> g_allocations{0};
}  // namespace

void* operator new(std::size_t size) {
  g_allocations.fetch_add(1, std::memory_order_relaxed);
  if (void* p = std::malloc(size == 0 ? 1 : size)) return p;
  throw std::bad_alloc();
}
// Every form of new that the library may call is replaced too (nothrow, arrays), so that
// each allocation and its release go through the same malloc/free pair (a sanitizer
// build otherwise sees its own nothrow new freed by this delete).
void* operator new(std::size_t size, const std::nothrow_t&) noexcept {
  g_allocations.fetch_add(1, std::memory_order_relaxed);
  return std::malloc(size == 0 ? 1 : size);
}
void* operator new[](std::size_t size) { return operator new(size); }
void* operator new[](std::size_t size, const std::nothrow_t& tag) noexcept {
  return operator new(size, tag);
}
void operator delete(void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }
void operator delete(void* p, const std::nothrow_t&) noexcept { std::free(p); }
void operator delete[](void* p) noexcept { std::free(p); }
void operator delete[](void* p, std::size_t) noexcept { std::free(p); }
void operator delete[](void* p, const std::nothrow_t&) noexcept { std::free(p); }

namespace knee::internal {
namespace {

TEST(HotPath, AssembleRefactorSolveAllocateNothing) {
  testing::CircuitBuilder b;
  DiodeModel m;
  m.series_res = 1.0;
  m.breakdown_v = 5.0;
  const int part = b.Part("P", m);
  b.V("V1", "ac", "gnd", 10.0);
  b.D("D1", "ac", "p", part);
  b.D("D2", "gnd", "p", part);
  b.D("D3", "n", "ac", part);
  b.D("D4", "n", "gnd", part);
  b.R("Rload", "p", "n", 1e3);
  b.I("I1", "gnd", "p", 1e-3);
  MnaSystem mna(b.circuit());
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(mna.size(), mna.col_ptr(), mna.row_index()), LinearStatus::kOk);
  std::vector<double> x(static_cast<size_t>(mna.size()), 0.1);
  std::vector<double> dx(x.size());
  AssemblyAids aids;
  aids.limit_junctions = true;
  mna.BeginRun(x);
  ASSERT_TRUE(mna.Assemble(x, aids).finite);
  ASSERT_EQ(klu.Factor(mna.values()), LinearStatus::kOk);  // the one full factorisation

  const long before = g_allocations.load();
  for (int step = 0; step < 20; ++step) {
    ASSERT_TRUE(mna.Assemble(x, aids).finite);
    ASSERT_EQ(klu.Refactor(mna.values()), LinearStatus::kOk);
    for (size_t i = 0; i < dx.size(); ++i) dx[i] = -mna.residual()[i];
    ASSERT_EQ(klu.Solve(dx), LinearStatus::kOk);
    for (size_t i = 0; i < x.size(); ++i) x[i] += dx[i];
  }
  EXPECT_EQ(g_allocations.load() - before, 0);
  EXPECT_EQ(klu.full_factorizations(), 1);
  // And the iteration went somewhere sensible: the load current is positive.
  EXPECT_GT(x[static_cast<size_t>(b.Node("p") - 1)], x[static_cast<size_t>(b.Node("n") - 1)]);
}

// A spread sample in the steady state: new part models for each diode and a new load on
// the same circuit, classified, solved from the nominal solution, verified and filled
// with no allocation once the first samples have sized every buffer.
TEST(HotPath, SpreadSamplesAllocateNothingInTheSteadyState) {
  testing::CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-8;
  m.ideality = 1.75;
  m.series_res = 0.05;
  m.breakdown_v = 400.0;
  m.breakdown_i = 5e-6;
  std::vector<int> parts;
  for (const char* name : {"P1", "P2", "P3", "P4"}) parts.push_back(b.Part(name, m));
  b.V("Vin", "ac_a", "ac_b", 12.0);
  b.R("Rref", "ac_b", "gnd", 1e6);
  b.D("D1", "ac_a", "out", parts[0]);
  b.D("D2", "ac_b", "out", parts[1]);
  b.D("D3", "ret", "ac_a", parts[2]);
  b.D("D4", "ret", "ac_b", parts[3]);
  b.R("Rload", "out", "ret", 47.0);
  b.R("Rgnd", "ret", "gnd", 1e6);
  Circuit c = b.circuit();
  auto created = BiasSolver::Create(c, {});
  ASSERT_TRUE(created.ok());
  BiasSolver& solver = **created;
  solver.set_describe_converged(false);
  Solution s;
  ASSERT_EQ(solver.Solve(&s).status, SolveStatus::kConverged);
  const std::vector<double> nominal(solver.unknowns().begin(), solver.unknowns().end());
  const size_t load = static_cast<size_t>(c.FindElement("Rload"));
  const auto sample = [&](int k) {
    for (size_t p = 0; p < parts.size(); ++p) {
      const double t = std::sin(1.3 * k + static_cast<double>(p));  // in [-1, 1]
      c.parts[static_cast<size_t>(parts[p])].model.sat_current = m.sat_current * std::exp2(t);
      c.parts[static_cast<size_t>(parts[p])].model.ideality = m.ideality * (1 + 0.03 * t);
    }
    c.elements[load].value = 47.0 * (1 + 0.05 * std::cos(0.7 * k));
    solver.UpdateValues(c);
    return solver.Solve(&s, nominal, /*allow_aids=*/false).status;
  };
  for (int k = 0; k < 5; ++k) ASSERT_EQ(sample(k), SolveStatus::kConverged) << k;
  const long before = g_allocations.load();
  for (int k = 5; k < 105; ++k) ASSERT_EQ(sample(k), SolveStatus::kConverged) << k;
  EXPECT_EQ(g_allocations.load() - before, 0);
  EXPECT_GT(s.element_current[load], 0.1);  // the samples solved a conducting bridge
}

}  // namespace
}  // namespace knee::internal
