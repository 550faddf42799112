// The linear solver interface: KLU against a dense LU with full pivoting (Eigen's
// FullPivLU, an independent general-purpose solver) as the oracle, on the Newton steps
// and on whole runs of both solvers.
#include "linear_solver.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "circuit_builder.h"
#include "dense_lu_solver.h"
#include "klu_solver.h"
#include "mna.h"
#include "newton.h"
#include "potential.h"

namespace knee::internal {
namespace {

// A bridge rectifier on a 12 V secondary behind 1 Ohm, feeding 1 kOhm (an invented
// circuit of the trade's usual shape).
Circuit Bridge() {
  testing::CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-12;
  m.ideality = 1.8;
  m.series_res = 0.05;
  const int part = b.Part("PR", m);
  b.V("V1", "ac", "gnd", 12.0);
  b.R("Rs", "ac", "in", 1.0);
  b.D("D1", "in", "pos", part);
  b.D("D2", "neg", "in", part);
  b.D("D3", "gnd", "pos", part);
  b.D("D4", "neg", "gnd", part);
  b.R("RL", "pos", "neg", 1e3);
  return b.circuit();
}

double Largest(const std::vector<double>& v) {
  double m = 0.0;
  for (double e : v) m = std::max(m, std::fabs(e));
  return m;
}

// One Newton step J dx = -F at a point off the solution: KLU's step agrees with the
// dense LU's to 1e-9 of its size.
TEST(LinearSolver, KluStepMatchesTheDenseOracle) {
  const Circuit c = Bridge();
  MnaSystem mna(c);
  std::vector<double> x(static_cast<size_t>(mna.size()), 0.3);
  ASSERT_TRUE(mna.Assemble(x, {}).finite);
  std::vector<double> sparse(mna.residual().begin(), mna.residual().end());
  for (double& v : sparse) v = -v;
  std::vector<double> dense = sparse;
  KluSolver klu;
  DenseLuSolver lu;
  for (LinearSolver* s : {static_cast<LinearSolver*>(&klu), static_cast<LinearSolver*>(&lu)}) {
    ASSERT_EQ(s->Analyze(mna.size(), mna.col_ptr(), mna.row_index()), LinearStatus::kOk);
    ASSERT_EQ(s->Factor(mna.values()), LinearStatus::kOk) << s->message();
  }
  ASSERT_EQ(klu.Solve(sparse), LinearStatus::kOk);
  ASSERT_EQ(lu.Solve(dense), LinearStatus::kOk);
  const double scale = Largest(dense);
  ASSERT_GT(scale, 0.0);
  for (size_t i = 0; i < dense.size(); ++i) EXPECT_NEAR(sparse[i], dense[i], 1e-9 * scale);
  EXPECT_GT(lu.rcond(), 0.0);
}

// Factors of a borrowed pattern are those of a copied one, bit for bit, through a factor
// and a refactor: KLU reads the same numbers either way.
TEST(LinearSolver, BorrowedPatternGivesTheCopiedOnesNumbers) {
  const Circuit c = Bridge();
  MnaSystem mna(c);
  std::vector<double> x(static_cast<size_t>(mna.size()), 0.3);
  ASSERT_TRUE(mna.Assemble(x, {}).finite);
  std::vector<double> rhs(mna.residual().begin(), mna.residual().end());
  KluSolver copied, borrowed;
  ASSERT_EQ(copied.Analyze(mna.size(), mna.col_ptr(), mna.row_index()), LinearStatus::kOk);
  ASSERT_EQ(borrowed.AnalyzeBorrowed(mna.size(), mna.col_ptr(), mna.row_index()),
            LinearStatus::kOk);
  for (int pass = 0; pass < 2; ++pass) {
    std::vector<double> a = rhs, b = rhs;
    const auto factor = [&](KluSolver& s) {
      return pass == 0 ? s.Factor(mna.values()) : s.Refactor(mna.values());
    };
    ASSERT_EQ(factor(copied), LinearStatus::kOk);
    ASSERT_EQ(factor(borrowed), LinearStatus::kOk);
    ASSERT_EQ(copied.Solve(a), LinearStatus::kOk);
    ASSERT_EQ(borrowed.Solve(b), LinearStatus::kOk);
    for (size_t i = 0; i < a.size(); ++i) EXPECT_EQ(a[i], b[i]) << pass << " " << i;
    EXPECT_EQ(copied.rcond(), borrowed.rcond());
    x.assign(x.size(), 0.5);  // the refactor's values
    ASSERT_TRUE(mna.Assemble(x, {}).finite);
  }
}

// A matrix that is singular in exact arithmetic is reported as such by the oracle.
TEST(LinearSolver, DenseOracleReportsASingularMatrix) {
  DenseLuSolver lu;
  const std::vector<int> col_ptr{0, 2, 4};
  const std::vector<int> rows{0, 1, 0, 1};
  ASSERT_EQ(lu.Analyze(2, col_ptr, rows), LinearStatus::kOk);
  EXPECT_EQ(lu.Factor(std::vector<double>{1.0, 2.0, 2.0, 4.0}), LinearStatus::kSingular);
  EXPECT_FALSE(lu.message().empty());
  EXPECT_EQ(lu.Factor(std::vector<double>{1.0, 2.0, 2.0, 5.0}), LinearStatus::kOk);
}

// Whole runs of the classic loop and of the potential method end at the same point
// whichever linear solver serves them (to 1e-9 of the largest node voltage).
TEST(LinearSolver, BothSolversAgreeWithEitherFactorisation) {
  const Circuit c = Bridge();
  for (bool potential : {false, true}) {
    std::vector<std::vector<double>> answers;
    KluSolver klu;
    DenseLuSolver lu;
    for (LinearSolver* s : {static_cast<LinearSolver*>(&klu), static_cast<LinearSolver*>(&lu)}) {
      MnaSystem mna(c);
      ASSERT_EQ(s->Analyze(mna.size(), mna.col_ptr(), mna.row_index()), LinearStatus::kOk);
      std::vector<double> x(static_cast<size_t>(mna.size()), 0.0);
      NewtonOutcome out;
      if (potential) {
        PotentialSolver solver(&mna, s, SolverOptions{}, mna.size());
        solver.set_stiff_conductance(StiffJunctionConductance(c, PotentialTuning{}.stiff_factor));
        out = solver.Run(x, nullptr);
      } else {
        NewtonSolver solver(&mna, s, SolverOptions{}, mna.size());
        out = solver.Run({}, "newton", x, nullptr);
      }
      ASSERT_EQ(out.exit, NewtonExit::kConverged) << out.detail;
      answers.push_back(x);
    }
    const double scale = Largest(answers[0]);
    ASSERT_GT(scale, 1.0);  // the load carries volts
    for (size_t i = 0; i < answers[0].size(); ++i) {
      EXPECT_NEAR(answers[0][i], answers[1][i], 1e-9 * scale) << "unknown " << i;
    }
  }
}

}  // namespace
}  // namespace knee::internal
