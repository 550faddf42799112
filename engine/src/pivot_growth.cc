#include "pivot_growth.h"

#include <cmath>
#include <cstddef>
#include <limits>

namespace knee::internal {
namespace {

// A column of U inside its block's LU array, as KLU lays it out for real entries
// (klu_internal.h, GET_POINTER): `len` row indices, padded to whole doubles, then `len`
// values. The tests hold this layout against klu_rgrowth itself.
const double* UColumnValues(const double* lu, int offset, int len) {
  const size_t index_units =
      (sizeof(int) * static_cast<size_t>(len) + sizeof(double) - 1) / sizeof(double);
  return lu + offset + index_units;
}

// Far wider than the three roundings of floor * max|u| * Rs and the two of klu_rgrowth's
// quotients (each at most 2^-53 relative), and far narrower than any growth that matters.
constexpr double kMargin = 1e-9;
// Outside [kSmallestSafe, 1/kSmallestSafe] the products and quotients may leave the
// normal range, where their relative rounding is no longer bounded.
constexpr double kSmallestSafe = 1e-280;
bool Safe(double v) { return v >= kSmallestSafe && v <= 1.0 / kSmallestSafe; }

// Whether the column's scaled entries in the block reach `bound` * max|u| (see the header):
// kAtLeast when one surely does, kBelow when all surely do not.
GrowthVerdict CompareColumn(const int* col_ptr, const int* row_index, const double* values,
                            const int* pinv, const double* rs, int column, int k1, double bound) {
  bool near = false;
  for (int p = col_ptr[column]; p < col_ptr[column + 1]; ++p) {
    const int row = pinv[row_index[p]];
    if (row < k1) continue;  // an entry of an off-diagonal block
    const double threshold = rs != nullptr ? bound * rs[row] : bound;
    const double a = std::fabs(values[p]);
    if (!Safe(threshold) || !std::isfinite(a)) return GrowthVerdict::kTooClose;
    if (a >= threshold * (1.0 + kMargin)) return GrowthVerdict::kAtLeast;
    if (a > threshold * (1.0 - kMargin)) near = true;
  }
  return near ? GrowthVerdict::kTooClose : GrowthVerdict::kBelow;
}

}  // namespace

PivotCheck CheckPivots(const int* col_ptr, const int* row_index, const double* values,
                       const klu_symbolic& symbolic, const klu_numeric& numeric, double floor) {
  const int* pinv = numeric.Pinv;
  const double* rs = numeric.Rs;  // nullptr without scaling (then every Rs_i is 1)
  const auto* udiag = static_cast<const double*>(numeric.Udiag);
  const int* q = symbolic.Q;
  const int* uip = numeric.Uip;
  const int* ulen = numeric.Ulen;
  PivotCheck check;
  check.growth = GrowthVerdict::kAtLeast;
  double umin = 0.0, umax = 0.0;
  for (int block = 0; block < symbolic.nblocks; ++block) {
    const int k1 = symbolic.R[block];
    const int k2 = symbolic.R[block + 1];
    const auto* lu = static_cast<const double*>(numeric.LUbx[block]);
    for (int k = k1; k < k2; ++k) {
      // klu_rcond: the pivots' magnitudes in column order, a zero or NaN pivot ends it.
      const double pivot = std::fabs(udiag[k]);
      if (std::isnan(pivot) || pivot == 0.0) return PivotCheck{};
      umin = k == 0 ? pivot : (pivot < umin ? pivot : umin);
      umax = k == 0 ? pivot : (pivot > umax ? pivot : umax);
      if (k2 - k1 == 1) continue;  // klu_rgrowth skips singleton blocks
      // max |u| of the column, with the comparisons klu_rgrowth makes (a NaN is skipped).
      double max_u = pivot;
      const int len = ulen[k];
      const double* ux = UColumnValues(lu, uip[k], len);
      for (int p = 0; p < len; ++p) {
        const double u = std::fabs(ux[p]);
        if (u > max_u) max_u = u;
      }
      const double bound = floor * max_u;
      const GrowthVerdict column =
          Safe(bound) ? CompareColumn(col_ptr, row_index, values, pinv, rs, q[k], k1, bound)
                      : GrowthVerdict::kTooClose;
      if (column == GrowthVerdict::kBelow) {
        return PivotCheck{std::numeric_limits<double>::quiet_NaN(), GrowthVerdict::kBelow};
      }
      if (column == GrowthVerdict::kTooClose) check.growth = GrowthVerdict::kTooClose;
    }
  }
  const double rcond = umin / umax;
  check.rcond = std::isnan(rcond) || rcond == 0.0 ? 0.0 : rcond;
  return check;
}

}  // namespace knee::internal
