// Disjoint sets of small integers (union-find with path halving), for the graph
// readings of a network: which nodes a kind of element joins.
#pragma once

#include <algorithm>
#include <numeric>
#include <vector>

namespace knee::internal {

class DisjointSets {
 public:
  explicit DisjointSets(size_t n) : parent_(n) { std::iota(parent_.begin(), parent_.end(), 0); }
  int Find(int i) {
    while (parent_[static_cast<size_t>(i)] != i) {
      auto& p = parent_[static_cast<size_t>(i)];
      p = parent_[static_cast<size_t>(p)];
      i = p;
    }
    return i;
  }
  // Returns false when a and b were already in the same set. The smaller index stays
  // the root, so gnd (node 0) is the root of its set.
  bool Join(int a, int b) {
    a = Find(a);
    b = Find(b);
    if (a == b) return false;
    parent_[static_cast<size_t>(std::max(a, b))] = std::min(a, b);
    return true;
  }

 private:
  std::vector<int> parent_;
};

}  // namespace knee::internal
