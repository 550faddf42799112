// The arithmetic of part spread against published values and closed forms.
#include "knee/spread_stats.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstdint>
#include <random>
#include <set>
#include <vector>

namespace knee {
namespace {

double Round4(double x) { return std::round(x * 1e4) / 1e4; }

// R. G. Newcombe, "Two-sided confidence intervals for the single proportion: comparison of
// seven methods", Stat. Med. 17, 857-872 (1998), Table II, method 3 (Wilson score, no
// continuity correction), to four decimals.
TEST(WilsonInterval, ReproducesNewcombe1998) {
  struct Case {
    long long r, n;
    double low, high;
  };
  for (const Case& c : {Case{81, 263, 0.2553, 0.3662}, Case{15, 148, 0.0624, 0.1605},
                        Case{0, 20, 0.0, 0.1611}, Case{1, 29, 0.0061, 0.1718}}) {
    const auto [low, high] = WilsonInterval(c.r, c.n);
    EXPECT_DOUBLE_EQ(Round4(low), c.low) << c.r << "/" << c.n;
    EXPECT_DOUBLE_EQ(Round4(high), c.high) << c.r << "/" << c.n;
  }
}

TEST(WilsonInterval, AllPassingReachesOneAndNoTrialsIsEverything) {
  const auto [low, high] = WilsonInterval(20, 20);
  EXPECT_DOUBLE_EQ(high, 1.0);
  // Closed form for r = n: n / (n + z^2) (Wilson 1927, the interval's lower end).
  const double z = 1.959963984540054;
  EXPECT_NEAR(low, 20 / (20 + z * z), 1e-15);
  const auto [l0, h0] = WilsonInterval(0, 0);
  EXPECT_EQ(l0, 0.0);
  EXPECT_EQ(h0, 1.0);
}

TEST(CounterUniform, DependsOnEveryCounterAndStaysInsideTheOpenInterval) {
  std::set<double> seen;
  for (std::uint64_t seed : {1u, 2u}) {
    for (std::uint64_t k = 0; k < 100; ++k) {
      for (std::uint64_t s = 0; s < 5; ++s) {
        const double u = CounterUniform(seed, k, s);
        EXPECT_GT(u, 0.0);
        EXPECT_LT(u, 1.0);
        seen.insert(u);
      }
    }
  }
  EXPECT_EQ(seen.size(), 1000u);  // no two counters give the same draw
  EXPECT_EQ(CounterUniform(7, 3, 2), CounterUniform(7, 3, 2));
}

TEST(CounterUniform, MeanAndVarianceOfAUniform) {
  // Uniform on (0, 1): mean 1/2, variance 1/12 (closed form); 4 standard errors.
  const int n = 200000;
  double sum = 0, sum2 = 0;
  for (int k = 0; k < n; ++k) {
    const double u = CounterUniform(1, static_cast<std::uint64_t>(k), 0);
    sum += u;
    sum2 += u * u;
  }
  const double mean = sum / n;
  const double var = sum2 / n - mean * mean;
  EXPECT_NEAR(mean, 0.5, 4 * std::sqrt(1.0 / 12 / n));
  // Var of (u - 1/2)^2 is 1/80 - 1/144 for a uniform.
  EXPECT_NEAR(var, 1.0 / 12, 4 * std::sqrt((1.0 / 80 - 1.0 / 144) / n));
}

TEST(TruncatedStandardNormal, MedianQuartilesAndCut) {
  EXPECT_NEAR(TruncatedStandardNormal(0.5, 3), 0.0, 1e-15);
  // The upper quartile of the normal cut at 3 is Phi^-1(Phi(-3) + 0.75 (1 - 2 Phi(-3))).
  const double tail = 0.5 * std::erfc(3 / std::sqrt(2.0));
  const double p = tail + 0.75 * (1 - 2 * tail);
  // Phi(z) = p solved by bisection on erfc, independently of the inversion under test.
  double lo = 0, hi = 3;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    (0.5 * std::erfc(-mid / std::sqrt(2.0)) < p ? lo : hi) = mid;
  }
  EXPECT_NEAR(TruncatedStandardNormal(0.75, 3), lo, 1e-12);
  EXPECT_LE(TruncatedStandardNormal(1 - 1e-16, 3), 3.0);
  EXPECT_GE(TruncatedStandardNormal(1e-16, 3), -3.0);
}

TEST(SortedQuantile, LinearInterpolationOfOrderStatistics) {
  // Hyndman & Fan type 7: h = (n - 1) p, x[floor h] + frac(h) (x[floor h + 1] - x[floor h]).
  const std::vector<double> v = {1, 2, 4, 8, 16};
  EXPECT_DOUBLE_EQ(SortedQuantile(v, 0.5), 4);
  EXPECT_DOUBLE_EQ(SortedQuantile(v, 0.0), 1);
  EXPECT_DOUBLE_EQ(SortedQuantile(v, 1.0), 16);
  EXPECT_DOUBLE_EQ(SortedQuantile(v, 0.375), 3);  // h = 1.5
  EXPECT_TRUE(std::isnan(SortedQuantile(std::vector<double>{}, 0.5)));
}

using V = std::vector<double>;

TEST(SpearmanRho, MonotoneTiesAndTextbookCase) {
  const V x = {1, 2, 3, 4, 5};
  EXPECT_DOUBLE_EQ(SpearmanRho(x, V{10, 20, 30, 40, 1000}), 1.0);
  EXPECT_DOUBLE_EQ(SpearmanRho(x, V{5, 4, 3, 2, 1}), -1.0);
  // Without ties rho = 1 - 6 sum d^2 / (n (n^2 - 1)) (C. Spearman, Amer. J. Psychol. 15,
  // 1904): ranks of y are 2 1 4 3 5, sum d^2 = 4, rho = 1 - 24/120 = 0.8.
  EXPECT_NEAR(SpearmanRho(x, V{2, 1, 4, 3, 5}), 0.8, 1e-15);
  EXPECT_TRUE(std::isnan(SpearmanRho(x, V{1, 1, 1, 1, 1})));
  // NaN pairs are left out: the rest is monotone.
  EXPECT_DOUBLE_EQ(SpearmanRho(V{1, 2, NAN, 4}, V{1, 2, 3, 4}), 1.0);
}

TEST(ComputeMoments, SampleMeanAndStandardDeviation) {
  const Moments m = ComputeMoments(std::vector<double>{2, 4, 4, 4, 5, 5, 7, 9, NAN});
  EXPECT_EQ(m.count, 8);
  EXPECT_DOUBLE_EQ(m.mean, 5);
  EXPECT_NEAR(m.std_dev, std::sqrt(32.0 / 7), 1e-15);  // sum of squares 32, n - 1 = 7
  EXPECT_EQ(m.min, 2);
  EXPECT_EQ(m.max, 9);
}

}  // namespace
}  // namespace knee

namespace knee {
namespace {

// Mean ranks by their definition (common practice, no source): 1 + the count of smaller
// values + half the count of other equal ones. Large enough for the radix path, with runs
// of ties, both zeros, negatives, tiny and huge magnitudes and infinities.
TEST(MeanRanks, MatchTheDefinitionOnALargeSetWithTies) {
  std::mt19937_64 bits(17);
  std::vector<double> v;
  for (int k = 0; k < 5000; ++k) {
    const std::uint64_t b = bits();
    switch (b % 6) {
      case 0:
        v.push_back(static_cast<double>(static_cast<int>(b % 41) - 20));  // many ties
        break;
      case 1:
        v.push_back((b & 8) != 0 ? 0.0 : -0.0);
        break;
      case 2:
        v.push_back((b & 8) != 0 ? HUGE_VAL : -HUGE_VAL);
        break;
      default: {
        const double x = std::bit_cast<double>(b);
        v.push_back(std::isnan(x) ? 1.5 : x);
      }
    }
  }
  const std::vector<double> rank = MeanRanks(v);
  ASSERT_EQ(rank.size(), v.size());
  for (size_t i = 0; i < v.size(); ++i) {
    size_t below = 0, equal = 0;
    for (double w : v) {
      below += w < v[i] ? 1 : 0;
      equal += w == v[i] ? 1 : 0;
    }
    ASSERT_EQ(rank[i], 1.0 + static_cast<double>(below) + 0.5 * static_cast<double>(equal - 1))
        << i << " " << v[i];
  }
}

// Selection gives the order statistics a full sort gives (common practice, no source),
// bit for bit, also when called again on the set it reordered and with runs of ties.
TEST(SelectedQuantile, EqualsTheQuantileOfTheSortedSet) {
  std::mt19937_64 bits(5);
  for (size_t n : {size_t{1}, size_t{2}, size_t{7}, size_t{1000}, size_t{20001}}) {
    std::vector<double> v(n);
    for (double& x : v) {
      const std::uint64_t b = bits();
      x = (b & 1) != 0 ? static_cast<double>(b % 13)
                       : std::ldexp(static_cast<double>(b >> 11), -53);
    }
    std::vector<double> sorted = v;
    std::sort(sorted.begin(), sorted.end());
    for (double p : {0.00135, 0.5, 0.99865, 0.0, 1.0, 0.3}) {
      EXPECT_EQ(SelectedQuantile(v, p), SortedQuantile(sorted, p)) << n << " " << p;
    }
  }
  std::vector<double> none;
  EXPECT_TRUE(std::isnan(SelectedQuantile(none, 0.5)));
}

// Pearson's r from centred sets is the textbook two-pass formula (common practice, no
// source): the means first, then the sums of products of the deviations.
TEST(PearsonCorrelation, CentredSetsGiveTheTwoPassFormula) {
  std::mt19937_64 bits(9);
  std::uniform_real_distribution<double> u(-3.0, 7.0);
  std::vector<double> x(3001), y(3001);
  for (size_t i = 0; i < x.size(); ++i) {
    x[i] = u(bits);
    y[i] = 0.3 * x[i] + u(bits);
  }
  double mx = 0, my = 0;
  for (size_t i = 0; i < x.size(); ++i) {
    mx += x[i];
    my += y[i];
  }
  mx /= static_cast<double>(x.size());
  my /= static_cast<double>(y.size());
  double sxy = 0, sxx = 0, syy = 0;
  for (size_t i = 0; i < x.size(); ++i) {
    sxy += (x[i] - mx) * (y[i] - my);
    sxx += (x[i] - mx) * (x[i] - mx);
    syy += (y[i] - my) * (y[i] - my);
  }
  const double textbook = sxy / std::sqrt(sxx * syy);
  EXPECT_EQ(PearsonCorrelation(Centre(x), Centre(y)), textbook);
  EXPECT_EQ(PearsonCorrelation(x, y), textbook);
  EXPECT_GT(textbook, 0.1);  // the pairs are correlated: the test compares a real number
  const std::vector<double> constant(x.size(), 2.0);
  EXPECT_TRUE(std::isnan(PearsonCorrelation(Centre(x), Centre(constant))));
}

}  // namespace
}  // namespace knee
