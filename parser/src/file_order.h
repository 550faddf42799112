// VisitInFileOrder: the items of several lists (params, parts, elements, ...) in the order
// they are written in the file.
#pragma once

#include <algorithm>
#include <array>
#include <cstddef>
#include <vector>

#include "syntax.h"

namespace knee {

// Whether `a` is written before `b`.
inline bool WrittenBefore(const Span& a, const Span& b) {
  return a.line != b.line ? a.line < b.line : a.column < b.column;
}

// Calls visit(list, index) for every item of K lists, list k holding sizes[k] items whose
// places span_at(k, index) gives, in the order of a stable sort of the lists' concatenation
// by place: by (line, column), items at one place in list order, then in index order. A
// list in that order already (as the parser makes each of its lists) is merged as it is;
// only a list that is not is sorted first, through a vector of its indices.
template <std::size_t K, class SpanAt, class Visit>
void VisitInFileOrder(const std::array<std::size_t, K>& sizes, SpanAt span_at, Visit visit) {
  std::array<std::vector<std::size_t>, K> order;  // empty: the list is in order as it is
  for (std::size_t k = 0; k < K; ++k) {
    bool sorted = true;
    for (std::size_t i = 1; i < sizes[k] && sorted; ++i) {
      sorted = !WrittenBefore(span_at(k, i), span_at(k, i - 1));
    }
    if (sorted) continue;
    order[k].resize(sizes[k]);
    for (std::size_t i = 0; i < sizes[k]; ++i) order[k][i] = i;
    std::stable_sort(order[k].begin(), order[k].end(), [&](std::size_t a, std::size_t b) {
      return WrittenBefore(span_at(k, a), span_at(k, b));
    });
  }
  std::array<std::size_t, K> next{};  // per list, the position of its next item
  const auto index_at = [&](std::size_t k) {
    return order[k].empty() ? next[k] : order[k][next[k]];
  };
  for (;;) {
    std::size_t first = K;  // the list whose next item comes first; a tie keeps the lower list
    for (std::size_t k = 0; k < K; ++k) {
      if (next[k] == sizes[k]) continue;
      if (first == K || WrittenBefore(span_at(k, index_at(k)), span_at(first, index_at(first)))) {
        first = k;
      }
    }
    if (first == K) return;
    visit(first, index_at(first));
    ++next[first];
  }
}

}  // namespace knee
