// The refactor's checks of stale pivots, asked once per Newton step: KLU's reciprocal
// condition estimate (klu_rcond) and its reciprocal pivot growth (klu_rgrowth) compared
// with a floor, in one pass over the factors and without klu_rgrowth's division per
// nonzero of A.
#pragma once

#include <klu.h>

namespace knee::internal {

enum class GrowthVerdict {
  kAtLeast,   // klu_rgrowth would give a value >= floor
  kBelow,     // klu_rgrowth would give a value < floor
  kTooClose,  // within rounding of the floor, or not finite: ask klu_rgrowth itself
};

struct PivotCheck {
  // klu_rcond's estimate, bit for bit: min|u_kk| / max|u_kk|, and 0 where a pivot is zero
  // or NaN or the quotient underflows. NaN when the pass ended at a column below the floor
  // (the factors are not kept then, whatever their pivots).
  double rcond = 0.0;
  GrowthVerdict growth = GrowthVerdict::kBelow;
};

// klu_rgrowth is the smallest, over the columns of every block larger than 1x1, of
// max_i |a_ij / Rs_i| / max_i |u_ij| (A's entries of the block, scaled by the factors' row
// scaling; U's column with its diagonal), and at most 1. For a floor below 1 it is >= floor
// exactly when every such column has an entry with |a_ij| >= floor * max|u_j| * Rs_i, a
// product instead of a quotient. Each comparison keeps a relative margin far wider than the
// few roundings of either form; a column inside the margin makes the verdict kTooClose.
// A zero pivot ends the pass with rcond 0 and growth kBelow.
// Requires 0 < floor < 1 and factors of `values` (after klu_factor or klu_refactor of
// col_ptr/row_index/values).
PivotCheck CheckPivots(const int* col_ptr, const int* row_index, const double* values,
                       const klu_symbolic& symbolic, const klu_numeric& numeric, double floor);

}  // namespace knee::internal
