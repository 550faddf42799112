#include "knee/spread_stats.h"

#include <algorithm>
#include <boost/math/special_functions/erf.hpp>
#include <cmath>
#include <limits>
#include <numeric>

namespace knee {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double Phi(double x) { return 0.5 * std::erfc(-x / std::sqrt(2.0)); }

}  // namespace

std::vector<double> MeanRanks(std::span<const double> v) {
  std::vector<std::pair<double, size_t>> order(v.size());
  for (size_t i = 0; i < v.size(); ++i) order[i] = {v[i], i};
  std::sort(order.begin(), order.end());
  std::vector<double> rank(v.size());
  for (size_t i = 0; i < order.size();) {
    size_t j = i;
    while (j + 1 < order.size() && order[j + 1].first == order[i].first) ++j;
    const double mean_rank = 0.5 * static_cast<double>(i + j) + 1.0;
    for (size_t k = i; k <= j; ++k) rank[order[k].second] = mean_rank;
    i = j + 1;
  }
  return rank;
}

double PearsonCorrelation(std::span<const double> x, std::span<const double> y) {
  const size_t n = std::min(x.size(), y.size());
  if (n < 2) return kNaN;
  double mx = 0, my = 0;
  for (size_t i = 0; i < n; ++i) {
    mx += x[i];
    my += y[i];
  }
  mx /= static_cast<double>(n);
  my /= static_cast<double>(n);
  double sxy = 0, sxx = 0, syy = 0;
  for (size_t i = 0; i < n; ++i) {
    sxy += (x[i] - mx) * (y[i] - my);
    sxx += (x[i] - mx) * (x[i] - mx);
    syy += (y[i] - my) * (y[i] - my);
  }
  if (sxx == 0 || syy == 0) return kNaN;
  return sxy / std::sqrt(sxx * syy);
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

double TruncatedStandardNormal(double u, double cut) {
  const double lo = Phi(-cut);
  const double hi = Phi(cut);
  const double p = lo + u * (hi - lo);
  // Phi^-1(p) = -sqrt(2) erfc^-1(2p); p stays inside (0, 1) for a finite cut.
  const double z = -std::sqrt(2.0) * boost::math::erfc_inv(2.0 * p);
  return std::clamp(z, -cut, cut);
}

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
