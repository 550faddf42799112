// The MNA assembly: the Jacobian stamped by every device against central finite
// differences of the assembled residual F(x), at reverse, knee, forward, breakdown and
// far-forward junction bias; and the pattern's shape.
#include "mna.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "circuit_builder.h"
#include "test_util.h"

namespace knee::internal {
namespace {

Circuit TestCircuit() {
  testing::CircuitBuilder b;
  DiodeModel m;
  m.sat_current = 1e-12;
  m.ideality = 1.3;
  m.series_res = 7.0;
  m.breakdown_v = 6.2;
  m.breakdown_i = 1e-3;
  const int part = b.Part("Z", m);
  b.V("V1", "in", "gnd", 3.0);
  b.R("R1", "in", "a", 1e3);
  b.D("D1", "a", "k", part, 2.0);
  b.R("R2", "k", "gnd", 2e3);
  b.I("I1", "gnd", "k", 1e-3);
  b.D("D2", "k", "gnd", part);  // same part
  return b.circuit();
}

std::vector<std::vector<double>> Dense(const MnaSystem& mna) {
  const auto n = static_cast<size_t>(mna.size());
  std::vector<std::vector<double>> j(n, std::vector<double>(n, 0.0));
  for (size_t col = 0; col < n; ++col) {
    for (int k = mna.col_ptr()[col]; k < mna.col_ptr()[col + 1]; ++k) {
      j[static_cast<size_t>(mna.row_index()[static_cast<size_t>(k)])][col] +=
          mna.values()[static_cast<size_t>(k)];
    }
  }
  return j;
}

TEST(Mna, LayoutAndPattern) {
  const Circuit c = TestCircuit();
  MnaSystem mna(c);
  // Nodes in, a, k and the current of V1: a diode's series resistance is inside the
  // device (devices.cc, Diode), so it adds no unknown.
  ASSERT_EQ(mna.size(), 4);
  EXPECT_EQ(mna.kcl_rows(), 3);
  EXPECT_EQ(mna.UnknownName(3), "V1:current");
  EXPECT_TRUE(mna.IsCurrentUnknown(3));
  EXPECT_FALSE(mna.IsCurrentUnknown(2));
  // CSC: sorted, duplicate-free row indices per column.
  for (int col = 0; col < mna.size(); ++col) {
    for (int k = mna.col_ptr()[static_cast<size_t>(col)] + 1;
         k < mna.col_ptr()[static_cast<size_t>(col) + 1]; ++k) {
      EXPECT_LT(mna.row_index()[static_cast<size_t>(k) - 1],
                mna.row_index()[static_cast<size_t>(k)]);
    }
  }
}

// Central differences (standard numerical differentiation): truncation ~ h^2 f'''/6,
// round-off ~ eps * (largest current at the row) / h; the bound allows both.
void ExpectJacobianMatches(MnaSystem& mna, std::vector<double> x, const char* where) {
  AssemblyAids aids;
  aids.gmin = 1e-9;  // the shunt's stamp is checked too
  ASSERT_TRUE(mna.Assemble(x, aids).finite);
  const auto jac = Dense(mna);
  const std::vector<double> flow(mna.flow().begin(), mna.flow().end());
  const double h = 1e-8;
  for (size_t col = 0; col < x.size(); ++col) {
    const double saved = x[col];
    x[col] = saved + h;
    ASSERT_TRUE(mna.Assemble(x, aids).finite);
    const std::vector<double> plus(mna.residual().begin(), mna.residual().end());
    x[col] = saved - h;
    ASSERT_TRUE(mna.Assemble(x, aids).finite);
    const std::vector<double> minus(mna.residual().begin(), mna.residual().end());
    x[col] = saved;
    for (size_t row = 0; row < x.size(); ++row) {
      const double fd = (plus[row] - minus[row]) / (2 * h);
      const double floor = 16 * 2.2e-16 * std::max(flow[row], 1.0) / h;
      EXPECT_CLOSE(jac[row][col], fd, 1e-5, floor)
          << where << ": d F[" << mna.UnknownName(static_cast<int>(row)) << "] / d "
          << mna.UnknownName(static_cast<int>(col));
    }
  }
}

TEST(Mna, JacobianMatchesFiniteDifferences) {
  const Circuit c = TestCircuit();
  MnaSystem mna(c);
  // n*Vt at 25 degC (Vt = 25.693 mV, rounded): only used to place a bias point at an
  // exponent of 83, far up the exponential, so the rounding does not matter.
  const double n_vt = 1.3 * 0.025693;
  // x = [in, a, k, V1:current]; D1 (area 2) from a to k is placed at junction voltage vj:
  // its terminal voltage is vj + rs*I(vj).
  const DiodeConstants d1 = ComputeDiodeConstants(c.parts[0].model, 2.0, c.temp);
  const auto at = [&](double vj) {
    const double v = vj + d1.rs * EvaluateJunction(d1, vj).current;
    return std::vector<double>{3.0, 1.0 + v, 1.0, -1e-3};
  };
  ExpectJacobianMatches(mna, at(-2.0), "reverse");
  ExpectJacobianMatches(mna, at(0.45), "knee");
  ExpectJacobianMatches(mna, at(0.7), "forward");
  ExpectJacobianMatches(mna, at(-6.25), "breakdown");
  ExpectJacobianMatches(mna, at(83 * n_vt), "far forward");
}

TEST(Mna, SourceScaleAndGminEnterTheResidual) {
  const Circuit c = TestCircuit();
  MnaSystem mna(c);
  const std::vector<double> zero(static_cast<size_t>(mna.size()), 0.0);
  AssemblyAids aids;
  aids.source_scale = 0.5;
  ASSERT_TRUE(mna.Assemble(zero, aids).finite);
  // V1's branch row: v(in) - v(gnd) - 0.5 * 3 V. I1 delivers 0.5 mA into k: F[k] = -0.5 mA.
  EXPECT_DOUBLE_EQ(mna.residual()[3], -1.5);
  EXPECT_NEAR(mna.residual()[2], -0.5e-3, 1e-15);
  std::vector<double> one(static_cast<size_t>(mna.size()), 0.0);
  one[0] = 1.0;
  one[3] = 0.0;
  aids = {};
  aids.gmin = 1e-3;
  ASSERT_TRUE(mna.Assemble(one, aids).finite);
  // Node in: R1 carries 1 mA out, the shunt 1 mA, V1's current 0.
  EXPECT_NEAR(mna.residual()[0], 2e-3, 1e-15);
}

}  // namespace
}  // namespace knee::internal
