// Disjoint sets over the integers 0..n-1 (union-find with path halving). Joining keeps
// the lower index as the representative, so gnd (node 0) is always the root of its set
// and every set is named by its lowest member.
#pragma once

#include <algorithm>
#include <cstddef>
#include <numeric>
#include <vector>

namespace knee::internal {

class DisjointSet {
 public:
  explicit DisjointSet(size_t n) : parent_(n) { std::iota(parent_.begin(), parent_.end(), 0); }
  // Every element in a set of its own again, n elements (no allocation when n is the size
  // it had).
  void Reset(size_t n) {
    parent_.resize(n);
    std::iota(parent_.begin(), parent_.end(), 0);
  }
  int Find(int i) {
    while (parent_[static_cast<size_t>(i)] != i) {
      int& p = parent_[static_cast<size_t>(i)];
      p = parent_[static_cast<size_t>(p)];
      i = p;
    }
    return i;
  }
  // Returns false when a and b were already in the same set.
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
