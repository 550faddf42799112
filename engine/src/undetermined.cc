// The undetermined-node test (undetermined.h; the derivation is in docs/solver.md,
// "Undetermined nodes").
#include "undetermined.h"

#include <cmath>

#include "device_kinds.h"
#include "devices.h"
#include "disjoint_set.h"

namespace knee::internal {
namespace {

// v = |v| in node voltages after a solve in island coordinates.
void ToNodeMagnitudes(const MnaSystem& mna, std::span<double> v) {
  mna.ToNodeSpace(v);
  for (double& e : v) e = std::fabs(e);
}

// rhs = the island coordinates of one ampere into node unknown k (and out at gnd): an
// island root's row is the sum of its island's KCL rows, so a member's current appears in
// its own row and in its root's.
void InjectAt(const MnaSystem& mna, int k, std::span<double> rhs) {
  rhs[static_cast<size_t>(k)] += 1.0;
  const int root = mna.islands().root_of(k);
  if (root >= 0) rhs[static_cast<size_t>(root)] += 1.0;
}

}  // namespace

// latitude_[k] = current_tol * Z_kk, Z the node-space inverse of the Jacobian on KCL rows
// (voltage sources held), where the screen does not clear k; current_tol * (Z 1)_k, an
// upper bound of it on a monotone network, where it does.
bool UndeterminedTest::Latitude(const MnaSystem& mna, double current_tol, KluSolver& factors) {
  const auto size = static_cast<size_t>(mna.size());
  const int rows = mna.kcl_rows();
  sum_.assign(size, 0.0);
  for (int k = 0; k < rows; ++k) InjectAt(mna, k, sum_);
  if (factors.Solve(sum_) != LinearStatus::kOk) return false;
  ToNodeMagnitudes(mna, sum_);
  latitude_.assign(static_cast<size_t>(rows), 0.0);
  int solves = 0;
  for (int k = 0; k < rows; ++k) {
    const auto i = static_cast<size_t>(k);
    double z = sum_[i];
    if (!(current_tol * z <= kUndeterminedVolts) && solves < kMaxDrivingPointSolves) {
      ++solves;
      column_.assign(size, 0.0);
      InjectAt(mna, k, column_);
      if (factors.Solve(column_) != LinearStatus::kOk) return false;
      ToNodeMagnitudes(mna, column_);
      z = column_[i];
    }
    latitude_[i] = std::isfinite(z) ? current_tol * z : HUGE_VAL;
  }
  return true;
}

std::vector<int> UndeterminedTest::Run(const Circuit& circuit, const MnaSystem& mna,
                                       std::span<const double> x, const SolverOptions& options,
                                       KluSolver& run, bool run_exact,
                                       std::optional<KluSolver>& probe) {
  const double tol = options.abs_current_tol;
  bool solved = run_exact && Latitude(mna, tol, run);
  if (!solved) {
    if (!probe) {
      probe.emplace();
      if (probe->AnalyzeBorrowed(mna.size(), mna.col_ptr(), mna.row_index()) != LinearStatus::kOk) {
        probe.reset();
      }
    }
    solved =
        probe && probe->Factor(mna.values()) == LinearStatus::kOk && Latitude(mna, tol, *probe);
  }
  std::vector<int> undetermined;
  if (!solved) {
    latitude_.assign(static_cast<size_t>(mna.kcl_rows()), HUGE_VAL);
    return UntiedByLatitude(circuit, mna, x, options);
  }
  for (int k = 0; k < mna.kcl_rows(); ++k) {
    if (!(latitude_[static_cast<size_t>(k)] <= kUndeterminedVolts)) undetermined.push_back(k);
  }
  return undetermined;
}

std::vector<int> UntiedByLatitude(const Circuit& circuit, const MnaSystem& mna,
                                  std::span<const double> x, const SolverOptions& options) {
  // g ties when g * kUndeterminedVolts >= abs_current_tol.
  const double g_min = options.abs_current_tol / kUndeterminedVolts;
  DisjointSet sets(circuit.nodes.size());
  mna.devices().Measure(x, [&](int element, const DeviceReport& r) {
    const Element& e = circuit.elements[static_cast<size_t>(element)];
    const double g = ConductanceAt(e, r);
    if (!(g > 0.0)) return;
    if (g >= g_min) sets.Join(e.node_a, e.node_b);
  });
  std::vector<int> untied;
  for (size_t n = 1; n < circuit.nodes.size(); ++n) {
    if (sets.Find(static_cast<int>(n)) != kGroundNode) {
      untied.push_back(UnknownOfNode(static_cast<int>(n)));
    }
  }
  return untied;
}

}  // namespace knee::internal
