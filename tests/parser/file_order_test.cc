// VisitInFileOrder: the order of a stable sort of the lists' concatenation by place, for
// lists in file order (merged) and for lists that are not (sorted first).
#include "file_order.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <random>
#include <utility>
#include <vector>

namespace knee {
namespace {

using Lists = std::array<std::vector<Span>, 3>;
using Order = std::vector<std::pair<std::size_t, std::size_t>>;  // (list, index)

Order Visited(const Lists& lists) {
  Order order;
  VisitInFileOrder(
      std::array<std::size_t, 3>{lists[0].size(), lists[1].size(), lists[2].size()},
      [&](std::size_t k, std::size_t i) { return lists[k][i]; },
      [&](std::size_t k, std::size_t i) { order.emplace_back(k, i); });
  return order;
}

// The reference: every (list, index) in list order, stable-sorted by place.
Order StableSorted(const Lists& lists) {
  Order order;
  for (std::size_t k = 0; k < lists.size(); ++k) {
    for (std::size_t i = 0; i < lists[k].size(); ++i) order.emplace_back(k, i);
  }
  std::stable_sort(order.begin(), order.end(), [&](const auto& a, const auto& b) {
    const Span& x = lists[a.first][a.second];
    const Span& y = lists[b.first][b.second];
    return x.line != y.line ? x.line < y.line : x.column < y.column;
  });
  return order;
}

Span At(int line, int column) { return Span{line, column, 1}; }

TEST(FileOrder, MergesListsInFileOrder) {
  const Lists lists = {std::vector<Span>{At(1, 1), At(4, 1)},
                       std::vector<Span>{At(2, 1), At(3, 5), At(3, 9)},
                       std::vector<Span>{At(3, 7), At(5, 1)}};
  const Order want = {{0, 0}, {1, 0}, {1, 1}, {2, 0}, {1, 2}, {0, 1}, {2, 1}};
  EXPECT_EQ(Visited(lists), want);
}

// Items at one place: the lower list first, and within a list the lower index first.
TEST(FileOrder, TiesKeepListThenIndexOrder) {
  const Lists lists = {std::vector<Span>{At(2, 3)}, std::vector<Span>{At(2, 3), At(2, 3)},
                       std::vector<Span>{At(1, 1), At(2, 3)}};
  const Order want = {{2, 0}, {0, 0}, {1, 0}, {1, 1}, {2, 1}};
  EXPECT_EQ(Visited(lists), want);
}

TEST(FileOrder, EmptyListsVisitNothing) {
  EXPECT_TRUE(Visited(Lists{}).empty());
  const Lists one = {std::vector<Span>{}, std::vector<Span>{At(7, 2)}, std::vector<Span>{}};
  EXPECT_EQ(Visited(one), (Order{{1, 0}}));
}

// A list out of file order is sorted (stably: its two items at 3:1 keep their order)
// before the merge; the other lists are merged as they are.
TEST(FileOrder, SortsAListOutOfOrder) {
  const Lists lists = {std::vector<Span>{At(2, 1), At(6, 1)},
                       std::vector<Span>{At(5, 1), At(3, 1), At(1, 1), At(3, 1)},
                       std::vector<Span>{At(4, 1)}};
  const Order want = {{1, 2}, {0, 0}, {1, 1}, {1, 3}, {2, 0}, {1, 0}, {0, 1}};
  EXPECT_EQ(Visited(lists), want);
  EXPECT_EQ(Visited(lists), StableSorted(lists));
}

// Random lists with many ties, some sorted and some not, against the stable sort.
TEST(FileOrder, MatchesTheStableSortOnRandomLists) {
  std::mt19937 random(21);  // fixed seed: the same lists every run
  for (int round = 0; round < 200; ++round) {
    Lists lists;
    for (std::size_t k = 0; k < lists.size(); ++k) {
      const auto size = static_cast<std::size_t>(random() % 12);
      for (std::size_t i = 0; i < size; ++i) {
        lists[k].push_back(At(static_cast<int>(random() % 6), static_cast<int>(random() % 3)));
      }
      if (random() % 2 == 0) {
        std::sort(lists[k].begin(), lists[k].end(),
                  [](const Span& a, const Span& b) { return WrittenBefore(a, b); });
      }
    }
    ASSERT_EQ(Visited(lists), StableSorted(lists)) << "round " << round;
  }
}

}  // namespace
}  // namespace knee
