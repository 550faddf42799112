// The arithmetic of sweep grids, blocks and shard slices (engine/include/knee/sweep.h):
// counts that do not fit are reported, blocks are computed rather than stored, and slices
// of one axis hold equal shares of the points.
#include <gtest/gtest.h>

#include <limits>
#include <vector>

#include "knee/sweep.h"

namespace knee {
namespace {

SweepGrid Grid(std::vector<size_t> sizes) {
  SweepGrid grid;
  for (size_t n : sizes) grid.axes.emplace_back(n, 0.0);
  return grid;
}

TEST(SweepGrid, PointCountThatDoesNotFitIsReported) {
  EXPECT_EQ(Grid({}).CheckedPointCount(), 0);
  EXPECT_EQ(Grid({3, 4}).CheckedPointCount(), 12);
  // 65536^4 = 2^64 wraps to 0 in 64-bit arithmetic; it must not be taken for 0.
  EXPECT_FALSE(Grid({65536, 65536, 65536, 65536}).CheckedPointCount().has_value());
  // 2^62 still fits.
  EXPECT_EQ(Grid({65536, 65536, 65536, 16384}).CheckedPointCount(), 1LL << 62);
}

// Blocks of at most 512 points that never cross a change of an outer value, found from
// their index and from a point without any stored list.
TEST(SweepBlocks, StartsAndBlockOfAgree) {
  const SweepGrid grid = Grid({1100, 3});
  const SweepBlocks blocks = CutIntoBlocks(grid, 512);
  ASSERT_EQ(blocks.block_count(), 9);
  const std::vector<long long> starts = {0, 512, 1024, 1100, 1612, 2124, 2200, 2712, 3224, 3300};
  for (long long b = 0; b <= blocks.block_count(); ++b) {
    EXPECT_EQ(blocks.Start(b), starts[static_cast<size_t>(b)]) << b;
  }
  for (long long p = 0; p < 3300; ++p) {
    const long long b = blocks.BlockOf(p);
    ASSERT_LE(blocks.Start(b), p);
    ASSERT_LT(p, blocks.Start(b + 1));
  }
  EXPECT_EQ(CutIntoBlocks(Grid({}), 512).block_count(), 0);
}

// One axis: slice k of n holds the points [k*T/n, (k+1)*T/n), so slices differ by at
// most one point and cover the sweep in order, even for a sweep of one block.
TEST(SweepShards, OneAxisIsSlicedByPoints) {
  EXPECT_EQ(ShardPoints(Grid({7}), 0, 2), (std::pair<long long, long long>{0, 3}));
  EXPECT_EQ(ShardPoints(Grid({7}), 1, 2), (std::pair<long long, long long>{3, 7}));
  for (long long total : {0LL, 1LL, 7LL, 511LL, 1100LL, 100003LL}) {
    for (int shards : {1, 2, 3, 7, 16, 1000}) {
      long long next = 0;
      for (int k = 0; k < shards; ++k) {
        const auto [first, end] = ShardPoints(Grid({static_cast<size_t>(total)}), k, shards);
        ASSERT_EQ(first, next) << total << " " << k << "/" << shards;
        ASSERT_GE(end - first, total / shards);
        ASSERT_LE(end - first, total / shards + 1);
        next = end;
      }
      ASSERT_EQ(next, total);
    }
  }
}

// Several axes: slices of the outer axis' values, whole lines of the inner axis each.
TEST(SweepShards, SeveralAxesAreSlicedByOuterValues) {
  const SweepGrid grid = Grid({10, 5});
  EXPECT_EQ(ShardPoints(grid, 0, 2), (std::pair<long long, long long>{0, 20}));
  EXPECT_EQ(ShardPoints(grid, 1, 2), (std::pair<long long, long long>{20, 50}));
}

}  // namespace
}  // namespace knee
