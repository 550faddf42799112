#include "knee/spread_stats.h"

#include <algorithm>
#include <bit>
#include <boost/math/special_functions/erf.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <numeric>

namespace knee {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double Phi(double x) { return 0.5 * std::erfc(-x / std::sqrt(2.0)); }

}  // namespace

namespace {

// Below this many values a comparison sort is as quick as the radix passes' tables.
constexpr size_t kRadixFrom = 2048;

// The indices of v in increasing order of value. A least-significant-digit radix sort of
// the doubles' bits made order-preserving as unsigned integers (the sign bit set on
// positives, every bit flipped on negatives; -0 counted as +0, which compares equal to it):
// O(n) passes where a spread's rank statistics of 1e5 samples spent most of their time
// in std::sort (common practice, no source). Ties may come in any order: the mean ranks
// depend only on where each run of equal values lies.
std::vector<size_t> IncreasingOrder(std::span<const double> v) {
  const size_t n = v.size();
  std::vector<size_t> order(n);
  std::iota(order.begin(), order.end(), size_t{0});
  const bool has_nan = std::any_of(v.begin(), v.end(), [](double x) { return std::isnan(x); });
  if (n < kRadixFrom || has_nan) {
    // (value, index) pairs, as ever: the order a NaN gets stays what it was.
    std::vector<std::pair<double, size_t>> pairs(n);
    for (size_t i = 0; i < n; ++i) pairs[i] = {v[i], i};
    std::sort(pairs.begin(), pairs.end());
    for (size_t i = 0; i < n; ++i) order[i] = pairs[i].second;
    return order;
  }
  std::vector<std::uint64_t> key(n), key_next(n);
  for (size_t i = 0; i < n; ++i) {
    const std::uint64_t u = std::bit_cast<std::uint64_t>(v[i] == 0.0 ? 0.0 : v[i]);
    key[i] = (u >> 63) != 0 ? ~u : u | (std::uint64_t{1} << 63);
  }
  std::vector<size_t> order_next(n);
  constexpr int kBits = 11;
  constexpr int kDigits = (64 + kBits - 1) / kBits;
  constexpr size_t kBuckets = size_t{1} << kBits;
  // Every digit's counts in one reading of the keys (a pass only moves them): start[d]
  // holds digit d's bucket starts, offset by one.
  std::vector<size_t> start(static_cast<size_t>(kDigits) * (kBuckets + 1), 0);
  for (size_t i = 0; i < n; ++i) {
    for (int d = 0; d < kDigits; ++d) {
      ++start[static_cast<size_t>(d) * (kBuckets + 1) + ((key[i] >> (d * kBits)) & (kBuckets - 1)) +
              1];
    }
  }
  for (int d = 0; d < kDigits; ++d) {
    const auto first = start.begin() + static_cast<std::ptrdiff_t>(d) * (kBuckets + 1);
    const auto last = first + static_cast<std::ptrdiff_t>(kBuckets + 1);
    // A digit that every key shares leaves the order as it is.
    if (std::find(first, last, n) != last) continue;
    std::partial_sum(first, last, first);
    const int shift = d * kBits;
    for (size_t i = 0; i < n; ++i) {
      const size_t to = first[static_cast<std::ptrdiff_t>((key[i] >> shift) & (kBuckets - 1))]++;
      key_next[to] = key[i];
      order_next[to] = order[i];
    }
    key.swap(key_next);
    order.swap(order_next);
  }
  return order;
}

}  // namespace

std::vector<double> MeanRanks(std::span<const double> v) {
  const std::vector<size_t> order = IncreasingOrder(v);
  std::vector<double> rank(v.size());
  for (size_t i = 0; i < order.size();) {
    size_t j = i;
    while (j + 1 < order.size() && v[order[j + 1]] == v[order[i]]) ++j;
    const double mean_rank = 0.5 * static_cast<double>(i + j) + 1.0;
    for (size_t k = i; k <= j; ++k) rank[order[k]] = mean_rank;
    i = j + 1;
  }
  return rank;
}

CentredValues Centre(std::span<const double> x) {
  CentredValues c;
  c.values.resize(x.size());
  double mean = 0;
  for (double v : x) mean += v;
  if (!x.empty()) mean /= static_cast<double>(x.size());
  for (size_t i = 0; i < x.size(); ++i) {
    c.values[i] = x[i] - mean;
    c.sum_squares += c.values[i] * c.values[i];
  }
  return c;
}

double PearsonCorrelation(const CentredValues& x, const CentredValues& y) {
  const size_t n = std::min(x.values.size(), y.values.size());
  if (n < 2) return kNaN;
  double sxy = 0;
  for (size_t i = 0; i < n; ++i) sxy += x.values[i] * y.values[i];
  if (x.sum_squares == 0 || y.sum_squares == 0) return kNaN;
  return sxy / std::sqrt(x.sum_squares * y.sum_squares);
}

double PearsonCorrelation(std::span<const double> x, std::span<const double> y) {
  const size_t n = std::min(x.size(), y.size());
  if (n < 2) return kNaN;
  return PearsonCorrelation(Centre(x.first(n)), Centre(y.first(n)));
}

std::uint64_t SplitMix64(std::uint64_t x) {
  x += 0x9e3779b97f4a7c15ULL;
  x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ULL;
  x = (x ^ (x >> 27)) * 0x94d049bb133111ebULL;
  return x ^ (x >> 31);
}

double CounterUniform(std::uint64_t seed, std::uint64_t sample, std::uint64_t stream) {
  std::uint64_t h = SplitMix64(seed);
  h = SplitMix64(h ^ sample);
  h = SplitMix64(h ^ (stream * 0xd1b54a32d192ed03ULL));
  // The top 53 bits, offset by half a step: never 0, never 1.
  return (static_cast<double>(h >> 11) + 0.5) * 0x1.0p-53;
}

TruncatedNormal::TruncatedNormal(double cut) : cut_(cut), lo_(Phi(-cut)), hi_(Phi(cut)) {}

double TruncatedNormal::operator()(double u) const {
  const double p = lo_ + u * (hi_ - lo_);
  // Phi^-1(p) = -sqrt(2) erfc^-1(2p); p stays inside (0, 1) for a finite cut.
  const double z = -std::sqrt(2.0) * boost::math::erfc_inv(2.0 * p);
  return std::clamp(z, -cut_, cut_);
}

double TruncatedStandardNormal(double u, double cut) { return TruncatedNormal(cut)(u); }

std::pair<double, double> WilsonInterval(long long successes, long long trials, double z) {
  if (trials <= 0) return {0.0, 1.0};
  const auto n = static_cast<double>(trials);
  const double p = static_cast<double>(successes) / n;
  const double z2 = z * z;
  const double centre = (p + z2 / (2 * n)) / (1 + z2 / n);
  const double half = z / (1 + z2 / n) * std::sqrt(p * (1 - p) / n + z2 / (4 * n * n));
  return {std::max(0.0, centre - half), std::min(1.0, centre + half)};
}

double SortedQuantile(std::span<const double> sorted, double p) {
  if (sorted.empty()) return kNaN;
  const double h = (static_cast<double>(sorted.size()) - 1) * p;
  const auto lo = static_cast<size_t>(std::floor(h));
  const size_t hi = std::min(lo + 1, sorted.size() - 1);
  return sorted[lo] + (h - static_cast<double>(lo)) * (sorted[hi] - sorted[lo]);
}

double SelectedQuantile(std::span<double> values, double p) {
  if (values.empty()) return kNaN;
  const double h = (static_cast<double>(values.size()) - 1) * p;
  const auto lo = static_cast<size_t>(std::floor(h));
  const size_t hi = std::min(lo + 1, values.size() - 1);
  const auto at_lo = values.begin() + static_cast<std::ptrdiff_t>(lo);
  std::nth_element(values.begin(), at_lo, values.end());
  const double low = *at_lo;
  // After the selection every value past lo is at least `low`: the next order statistic
  // is their least.
  const double high = hi == lo ? low : *std::min_element(at_lo + 1, values.end());
  return low + (h - static_cast<double>(lo)) * (high - low);
}

double SpearmanRho(std::span<const double> x, std::span<const double> y) {
  std::vector<double> a, b;
  for (size_t i = 0; i < x.size() && i < y.size(); ++i) {
    if (std::isnan(x[i]) || std::isnan(y[i])) continue;
    a.push_back(x[i]);
    b.push_back(y[i]);
  }
  if (a.size() < 2) return kNaN;
  return PearsonCorrelation(MeanRanks(a), MeanRanks(b));
}

Moments ComputeMoments(std::span<const double> values) {
  Moments m;
  double mean = 0, m2 = 0;
  for (double v : values) {
    if (!std::isfinite(v)) continue;
    if (m.count == 0) {
      m.min = m.max = v;
    } else {
      m.min = std::min(m.min, v);
      m.max = std::max(m.max, v);
    }
    ++m.count;
    const double delta = v - mean;
    mean += delta / static_cast<double>(m.count);
    m2 += delta * (v - mean);
  }
  if (m.count == 0) {
    m.mean = m.std_dev = m.min = m.max = kNaN;
    return m;
  }
  m.mean = mean;
  m.std_dev = m.count > 1 ? std::sqrt(m2 / static_cast<double>(m.count - 1)) : 0.0;
  return m;
}

}  // namespace knee
