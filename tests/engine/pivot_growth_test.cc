// The refactor's pivot checks against KLU's own klu_rgrowth and klu_rcond: the
// division-free comparison must give klu_rgrowth's verdict wherever it gives one, and a
// verdict wherever the floor is not within rounding of the growth; the condition estimate
// must be klu_rcond's to the bit. This also holds knee's reading of KLU's
// factor layout (the columns of U, the row scaling, the blocks) against KLU itself.
#include "pivot_growth.h"

#include <gtest/gtest.h>
#include <klu.h>

#include <cmath>
#include <random>
#include <vector>

#include "klu_solver.h"

namespace knee::internal {
namespace {

struct Csc {
  int n = 0;
  std::vector<int> col_ptr, row_index;
  std::vector<double> values;
};

// A random n x n pattern with a full diagonal and about `per_column` more entries a column;
// with `blocks` > 1 the matrix is block upper triangular in a shuffled order of rows and
// columns, so that KLU's ordering finds several blocks (some 1x1) to skip or keep.
Csc RandomPattern(std::mt19937_64& rng, int n, int per_column, int blocks) {
  std::vector<int> block_of(static_cast<size_t>(n));
  for (int i = 0; i < n; ++i) block_of[static_cast<size_t>(i)] = i * blocks / n;
  std::vector<int> row_perm(static_cast<size_t>(n)), col_perm(static_cast<size_t>(n));
  for (int i = 0; i < n; ++i)
    row_perm[static_cast<size_t>(i)] = col_perm[static_cast<size_t>(i)] = i;
  std::shuffle(row_perm.begin(), row_perm.end(), rng);
  std::shuffle(col_perm.begin(), col_perm.end(), rng);
  std::uniform_int_distribution<int> pick(0, n - 1);
  std::vector<std::vector<int>> rows(static_cast<size_t>(n));
  for (int j = 0; j < n; ++j) {
    std::vector<int>& r = rows[static_cast<size_t>(col_perm[static_cast<size_t>(j)])];
    r.push_back(row_perm[static_cast<size_t>(j)]);
    for (int e = 0; e < per_column; ++e) {
      const int i = pick(rng);
      // Block upper triangular: row block <= column block.
      if (block_of[static_cast<size_t>(i)] <= block_of[static_cast<size_t>(j)]) {
        r.push_back(row_perm[static_cast<size_t>(i)]);
      }
    }
  }
  Csc a;
  a.n = n;
  a.col_ptr.push_back(0);
  for (std::vector<int>& r : rows) {
    std::sort(r.begin(), r.end());
    r.erase(std::unique(r.begin(), r.end()), r.end());
    a.row_index.insert(a.row_index.end(), r.begin(), r.end());
    a.col_ptr.push_back(static_cast<int>(a.row_index.size()));
  }
  a.values.resize(a.row_index.size());
  return a;
}

// Values over twelve decades, of either sign.
void RandomValues(std::mt19937_64& rng, Csc* a) {
  std::uniform_real_distribution<double> decade(-6.0, 6.0);
  std::bernoulli_distribution negative(0.3);
  for (double& v : a->values) v = (negative(rng) ? -1.0 : 1.0) * std::pow(10.0, decade(rng));
}

class KluFactors {
 public:
  // halt_if_singular: KLU's default stops a factorisation at a zero pivot.
  explicit KluFactors(Csc* a, bool halt_if_singular = true) : a_(a) {
    klu_defaults(&common_);
    common_.halt_if_singular = halt_if_singular ? 1 : 0;
    symbolic_ = klu_analyze(a->n, a->col_ptr.data(), a->row_index.data(), &common_);
  }
  ~KluFactors() {
    if (numeric_ != nullptr) klu_free_numeric(&numeric_, &common_);
    if (symbolic_ != nullptr) klu_free_symbolic(&symbolic_, &common_);
  }
  KluFactors(const KluFactors&) = delete;
  KluFactors& operator=(const KluFactors&) = delete;
  bool Factor() {
    if (numeric_ != nullptr) klu_free_numeric(&numeric_, &common_);
    numeric_ = klu_factor(a_->col_ptr.data(), a_->row_index.data(), a_->values.data(), symbolic_,
                          &common_);
    return numeric_ != nullptr && common_.status == KLU_OK;
  }
  // The old pivots on new values: their growth can be anything.
  bool Refactor() {
    return klu_refactor(a_->col_ptr.data(), a_->row_index.data(), a_->values.data(), symbolic_,
                        numeric_, &common_) != 0 &&
           (common_.status == KLU_OK ||
            (common_.halt_if_singular == 0 && common_.status == KLU_SINGULAR));
  }
  double Growth() {
    EXPECT_NE(klu_rgrowth(a_->col_ptr.data(), a_->row_index.data(), a_->values.data(), symbolic_,
                          numeric_, &common_),
              0);
    return common_.rgrowth;
  }
  double Rcond() {
    EXPECT_NE(klu_rcond(symbolic_, numeric_, &common_), 0);
    return common_.rcond;
  }
  PivotCheck Check(double floor) const {
    return CheckPivots(a_->col_ptr.data(), a_->row_index.data(), a_->values.data(), *symbolic_,
                       *numeric_, floor);
  }
  int blocks() const { return symbolic_->nblocks; }

 private:
  Csc* a_;
  klu_common common_{};
  klu_symbolic* symbolic_ = nullptr;
  klu_numeric* numeric_ = nullptr;
};

// Each verdict agrees with klu_rgrowth, and floors a millionth away from the growth (far
// outside the comparison's margin) always get one.
void ExpectVerdictsOfKlu(KluFactors& f, int* decided) {
  const double g = f.Growth();
  ASSERT_TRUE(g > 0.0 && g <= 1.0) << g;
  for (double floor : {1e-10, 1e-6, 1e-3, 0.1, 0.5, 0.999, g * (1 - 1e-6), g * (1 + 1e-6),
                       g * (1 - 1e-12), g * (1 + 1e-12), g}) {
    if (!(floor > 0.0 && floor < 1.0)) continue;
    const PivotCheck check = f.Check(floor);
    const GrowthVerdict v = check.growth;
    // klu_rcond's estimate, to the bit, wherever the pass went through every column.
    if (v != GrowthVerdict::kBelow) {
      EXPECT_EQ(check.rcond, f.Rcond());
    }
    if (v == GrowthVerdict::kAtLeast) {
      EXPECT_GE(g, floor);
    }
    if (v == GrowthVerdict::kBelow) {
      EXPECT_LT(g, floor);
    }
    if (std::fabs(floor - g) > 1e-7 * g) {
      EXPECT_NE(v, GrowthVerdict::kTooClose) << "growth " << g << ", floor " << floor;
      ++*decided;
    }
  }
}

TEST(PivotGrowth, VerdictsAgreeWithKluOnFreshAndStalePivots) {
  std::mt19937_64 rng(20261205);
  int matrices = 0, decided = 0, stale_below_1e_6 = 0, with_blocks = 0;
  for (int trial = 0; trial < 300; ++trial) {
    const int n = 4 + trial % 60;
    Csc a = RandomPattern(rng, n, 1 + trial % 4, 1 + trial % 5);
    RandomValues(rng, &a);
    KluFactors f(&a);
    if (!f.Factor()) continue;  // structurally or numerically singular: nothing to check
    ++matrices;
    if (f.blocks() > 1) ++with_blocks;
    ExpectVerdictsOfKlu(f, &decided);
    RandomValues(rng, &a);
    if (!f.Refactor()) continue;
    if (f.Growth() < 1e-6) ++stale_below_1e_6;
    ExpectVerdictsOfKlu(f, &decided);
  }
  // The trials cover what they are meant to: many factorisations, BTF blocks, and stale
  // pivots whose growth is small.
  EXPECT_GT(matrices, 200);
  EXPECT_GT(with_blocks, 50);
  EXPECT_GT(stale_below_1e_6, 10);
  EXPECT_GT(decided, 2000);
}

// A zero pivot (old pivots on values that cancel it, kept by KLU when told not to halt)
// ends the check with klu_rcond's 0.
TEST(PivotGrowth, AZeroPivotGivesKlusZeroEstimate) {
  Csc a;
  a.n = 2;
  a.col_ptr = {0, 2, 4};
  a.row_index = {0, 1, 0, 1};
  a.values = {4, 1, 1, 3};
  KluFactors f(&a, /*halt_if_singular=*/false);
  ASSERT_TRUE(f.Factor());
  a.values = {1, 1, 1, 1};  // singular: the second pivot is 1 - 1*1 = 0
  ASSERT_TRUE(f.Refactor());
  EXPECT_EQ(f.Rcond(), 0.0);
  const PivotCheck check = f.Check(1e-10);
  EXPECT_EQ(check.rcond, 0.0);
  EXPECT_EQ(check.growth, GrowthVerdict::kBelow);
}

// KluSolver::Refactor keeps the old pivots while the growth is above the floor and takes
// fresh ones once it falls below (the pivot 1e-14 against entries of 1: growth 1e-14).
TEST(PivotGrowth, RefactorTakesFreshPivotsOnlyBelowTheFloor) {
  const std::vector<int> col_ptr{0, 2, 4};
  const std::vector<int> row_index{0, 1, 0, 1};
  KluSolver klu;
  ASSERT_EQ(klu.Analyze(2, col_ptr, row_index), LinearStatus::kOk);
  ASSERT_EQ(klu.Factor(std::vector<double>{4, 1, 1, 3}), LinearStatus::kOk);
  ASSERT_EQ(klu.Refactor(std::vector<double>{5, 1, 1, 2}), LinearStatus::kOk);
  EXPECT_EQ(klu.full_factorizations(), 1);
  ASSERT_EQ(klu.Refactor(std::vector<double>{1e-14, 1, 1, 1e-14}), LinearStatus::kOk);
  EXPECT_EQ(klu.full_factorizations(), 2);
  std::vector<double> b{1.0, 2.0};  // x = (2, 1) to within 1e-14
  ASSERT_EQ(klu.Solve(b), LinearStatus::kOk);
  EXPECT_NEAR(b[0], 2.0, 1e-12);
  EXPECT_NEAR(b[1], 1.0, 1e-12);
}

}  // namespace
}  // namespace knee::internal
