// The Newton loop on a tiny hand-built system, and the linear solver wrapper.
#include "newton.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "circuit_builder.h"
#include "klu_solver.h"
#include "knee/diode_law.h"
#include "mna.h"
#include "test_util.h"

namespace knee::internal {
namespace {

// One unknown: a current source of 1 mA into a diode to gnd. Inverting Shockley's law
// (Shockley, Bell Syst. Tech. J. 28, 1949) gives v = n Vt ln(I/Is + 1) exactly.
TEST(Newton, TinySystemConvergesToTheClosedForm) {
  testing::CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-14;
  m.ideality = 1.0;
  const int part = b.Part("P", m);
  b.I("I1", "gnd", "a", 1e-3);
  b.D("D1", "a", "gnd", part);
  MnaSystem mna(b.circuit());
  ASSERT_EQ(mna.size(), 1);
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(mna.size(), mna.col_ptr(), mna.row_index()), LinearStatus::kOk);
  SolverOptions o;
  NewtonSolver newton(&mna, &klu, o, mna.size());
  std::vector<double> x{0.0};
  std::vector<NewtonStepRecord> trace;
  const NewtonOutcome out = newton.Run({}, "newton", x, &trace);
  ASSERT_EQ(out.exit, NewtonExit::kConverged) << out.detail;
  const double n_vt = ThermalVoltage(ToKelvin(25.0));
  EXPECT_CLOSE(x[0], n_vt * std::log1p(1e-3 / 1e-14), 1e-13, 0.0);
  // The first step from 0 V asks for about 2.6e9 V (1 mA over Is/nVt): limiting must act.
  ASSERT_FALSE(trace.empty());
  EXPECT_TRUE(trace.front().limited);
  EXPECT_FALSE(trace.back().limited);
  EXPECT_EQ(trace.back().phase, "newton");
  EXPECT_NE(out.detail.find("converged"), std::string::npos);
  // The residual at the answer passes the test on the exact model.
  ASSERT_TRUE(mna.Assemble(x, {}).finite);
  EXPECT_TRUE(CheckResidual(mna, o).passed());
  EXPECT_LE(std::fabs(mna.residual()[0]), 1e-15);
}

TEST(Newton, WithoutLimitingTheSameSystemStillConverges) {
  testing::CircuitBuilder b;
  DiodeModel m;
  const int part = b.Part("P", m);
  b.I("I1", "gnd", "a", 1e-3);
  b.D("D1", "a", "gnd", part);
  MnaSystem mna(b.circuit());
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(mna.size(), mna.col_ptr(), mna.row_index()), LinearStatus::kOk);
  SolverOptions o;
  o.junction_limiting = false;
  // The first step asks for 2.6e9 V, where the law's current is not a double: it is
  // halved back to where it is, and Newton then descends the exponential by about n*Vt
  // a step (the law is not continued linearly to shorten that).
  o.max_newton_steps = 2000;
  NewtonSolver newton(&mna, &klu, o, mna.size());
  std::vector<double> x{0.0};
  const NewtonOutcome out = newton.Run({}, "newton", x, nullptr);
  ASSERT_EQ(out.exit, NewtonExit::kConverged) << out.detail;
  EXPECT_CLOSE(x[0], ThermalVoltage(ToKelvin(25.0)) * std::log1p(1e-3 / 1e-14), 1e-13, 0.0);
}

TEST(Newton, SingularJacobianIsReportedNotHidden) {
  // Skips CheckTopology on purpose: x and y float, and a current source pushes 1 mA into
  // them that nothing can carry away. A regularised step would move them by ~1e15 V: that
  // must come out as a singular matrix, not as a "solution".
  testing::CircuitBuilder b;
  b.V("V1", "a", "gnd", 1.0);
  b.R("R1", "a", "gnd", 1.0);
  b.R("R2", "x", "y", 1.0);
  b.I("I1", "gnd", "x", 1e-3);
  MnaSystem mna(b.circuit());
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(mna.size(), mna.col_ptr(), mna.row_index()), LinearStatus::kOk);
  NewtonSolver newton(&mna, &klu, SolverOptions{}, mna.size());
  std::vector<double> x(static_cast<size_t>(mna.size()), 0.0);
  const NewtonOutcome out = newton.Run({}, "newton", x, nullptr);
  EXPECT_EQ(out.exit, NewtonExit::kSingular);
  EXPECT_NE(out.detail.find("singular"), std::string::npos) << out.detail;
  // Through the BiasSolver, by default: the current source into the floating pair has no
  // way out, which the network's topology tells before any step, with the reason.
  auto solver = BiasSolver::Create(b.circuit(), {});
  ASSERT_TRUE(solver.ok());
  Solution s;
  const SolveSummary found = (*solver)->Solve(&s);
  EXPECT_EQ(found.status, SolveStatus::kNoSolution);
  EXPECT_EQ(found.newton_steps, 0);
  EXPECT_NE(found.detail.find("'I1'"), std::string::npos) << found.detail;
  EXPECT_NE(found.detail.find("nodes 'x', 'y', which have no other path"), std::string::npos)
      << found.detail;
  EXPECT_FALSE(found.unique);
  // With the ladder and the topology check out of the way (a negative resistor makes the
  // network non-monotone): gmin makes the aided system regular, but the final plain run
  // on the exact model is singular again, and that is what is reported.
  b.R("Rneg", "a", "gnd", -1e6);
  SolverOptions classic;
  classic.method = SolverMethod::kClassic;
  auto ladder = BiasSolver::Create(b.circuit(), classic);
  ASSERT_TRUE(ladder.ok());
  EXPECT_EQ((*ladder)->Solve(&s).status, SolveStatus::kSingularMatrix);
}

// KLU on a 3x3 system with a known solution (checked by substitution).
TEST(KluSolver, FactorRefactorSolve) {
  // A = [4 1 0; 1 3 1; 0 1 2] in CSC.
  const std::vector<int> col_ptr{0, 2, 5, 7};
  const std::vector<int> row_index{0, 1, 0, 1, 2, 1, 2};
  std::vector<double> values{4, 1, 1, 3, 1, 1, 2};
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(3, col_ptr, row_index), LinearStatus::kOk);
  ASSERT_EQ(klu.Factor(values), LinearStatus::kOk);
  const std::vector<double> x_true{1.0, -2.0, 3.0};
  const auto rhs_of = [&](const std::vector<double>& v) {
    return std::vector<double>{v[0] * x_true[0] + v[2] * x_true[1],
                               v[1] * x_true[0] + v[3] * x_true[1] + v[5] * x_true[2],
                               v[4] * x_true[1] + v[6] * x_true[2]};
  };
  std::vector<double> b = rhs_of(values);
  ASSERT_EQ(klu.Solve(b), LinearStatus::kOk);
  for (size_t i = 0; i < 3; ++i) EXPECT_CLOSE(b[i], x_true[i], 1e-14, 1e-15);
  values = {5, 2, 2, 7, 1, 1, 3};  // same pattern, new numbers
  ASSERT_EQ(klu.Refactor(values), LinearStatus::kOk);
  b = rhs_of(values);
  ASSERT_EQ(klu.Solve(b), LinearStatus::kOk);
  for (size_t i = 0; i < 3; ++i) EXPECT_CLOSE(b[i], x_true[i], 1e-14, 1e-15);
  // Move-only ownership: the moved-to object keeps working.
  KluSolver moved = std::move(klu);
  b = rhs_of(values);
  ASSERT_EQ(moved.Solve(b), LinearStatus::kOk);
  EXPECT_CLOSE(b[2], 3.0, 1e-14, 0.0);
}

// When the old pivot becomes zero, Refactor falls back to a full factorisation with
// fresh pivots and still solves the (regular) system.
TEST(KluSolver, RefactorFallsBackWhenAPivotVanishes) {
  const std::vector<int> col_ptr{0, 2, 4};
  const std::vector<int> row_index{0, 1, 0, 1};
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(2, col_ptr, row_index), LinearStatus::kOk);
  ASSERT_EQ(klu.Factor(std::vector<double>{4, 1, 1, 3}), LinearStatus::kOk);
  ASSERT_EQ(klu.full_factorizations(), 1);
  ASSERT_EQ(klu.Refactor(std::vector<double>{0, 1, 1, 0}), LinearStatus::kOk);
  EXPECT_EQ(klu.full_factorizations(), 2);
  std::vector<double> b{2.0, 5.0};  // [0 1; 1 0] x = b  =>  x = (5, 2)
  ASSERT_EQ(klu.Solve(b), LinearStatus::kOk);
  EXPECT_CLOSE(b[0], 5.0, 1e-15, 0.0);
  EXPECT_CLOSE(b[1], 2.0, 1e-15, 0.0);
}

TEST(KluSolver, SingularIsRecoverable) {
  const std::vector<int> col_ptr{0, 2, 4};
  const std::vector<int> row_index{0, 1, 0, 1};
  const std::vector<double> values{1, 1, 1, 1};  // rank 1
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(2, col_ptr, row_index), LinearStatus::kOk);
  EXPECT_EQ(klu.Factor(values), LinearStatus::kSingular);
  EXPECT_NE(klu.message().find("singular"), std::string::npos);
  // A regular matrix on the same pattern factors again afterwards.
  EXPECT_EQ(klu.Refactor(std::vector<double>{2, 1, 1, 2}), LinearStatus::kOk);
}

}  // namespace
}  // namespace knee::internal
