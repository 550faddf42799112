// The arithmetic of part spread (docs/spread.md): counter-based draws, the truncated
// normal, and the statistics of a set of samples. Pure functions, no state.
#pragma once

#include <cstdint>
#include <span>
#include <utility>
#include <vector>

namespace knee {

// SplitMix64's finalizer (G. L. Steele, D. Lea, C. H. Flood, "Fast splittable
// pseudorandom number generators", OOPSLA 2014): a bijection of 64-bit words whose output
// bits each depend on every input bit.
std::uint64_t SplitMix64(std::uint64_t x);

// A uniform draw in (0, 1) that depends only on (seed, sample, stream): the three words
// are hashed in turn, so any sample can be drawn on any thread in any order. 53 bits.
double CounterUniform(std::uint64_t seed, std::uint64_t sample, std::uint64_t stream);

// The standard normal cut at ±cut, by inversion: Phi^-1(Phi(-cut) + u (Phi(cut) -
// Phi(-cut))) for u in (0, 1).
double TruncatedStandardNormal(double u, double cut);

// The same map with the cut's probabilities Phi(-cut) and Phi(cut) computed once, for
// many draws of one cut (the same numbers, bit for bit).
class TruncatedNormal {
 public:
  explicit TruncatedNormal(double cut);
  double operator()(double u) const;

 private:
  double cut_, lo_, hi_;
};

// The Wilson score interval of a proportion (E. B. Wilson, J. Amer. Statist. Assoc. 22,
// 209-212, 1927), without continuity correction, for `successes` of `trials` at the
// two-sided normal quantile z (1.959964 for 95 %). {0, 1} for no trials.
std::pair<double, double> WilsonInterval(long long successes, long long trials,
                                         double z = 1.959963984540054);

// The p-quantile (0 <= p <= 1) of sorted finite values by linear interpolation between
// order statistics (R. J. Hyndman, Y. Fan, Amer. Statist. 50, 361-365, 1996, type 7).
// NaN for an empty set.
double SortedQuantile(std::span<const double> sorted, double p);

// SortedQuantile of finite values in any order, by selection (C. A. R. Hoare's FIND,
// Comm. ACM 4(7), 1961, as std::nth_element): the same order statistics without sorting
// the whole set. Reorders `values`; may be called again on the reordered set.
double SelectedQuantile(std::span<double> values, double p);

// Spearman's rank correlation of paired values (ties get their mean rank; pairs with a
// NaN are left out). NaN when fewer than 2 pairs remain or either side is constant.
double SpearmanRho(std::span<const double> x, std::span<const double> y);

// The mean ranks (1-based, ties averaged) of values without NaN, and Pearson's
// correlation of two equally long sets: Spearman's rho is the latter of the former, so a
// column correlated with many others is ranked once.
std::vector<double> MeanRanks(std::span<const double> values);
double PearsonCorrelation(std::span<const double> x, std::span<const double> y);

// A set of values less their mean, and the sum of their squares: Pearson's correlation
// of one set against many centres it once. PearsonCorrelation(x, y) is exactly that of
// Centre(x) and Centre(y) over the common length.
struct CentredValues {
  std::vector<double> values;
  double sum_squares = 0;
};
CentredValues Centre(std::span<const double> x);
double PearsonCorrelation(const CentredValues& x, const CentredValues& y);

struct Moments {
  long long count = 0;  // finite values
  double mean = 0;
  double std_dev = 0;  // sample standard deviation (n - 1), 0 for fewer than 2 values
  double min = 0;
  double max = 0;
};
// Of the finite values (Welford's running update: B. P. Welford, Technometrics 4, 1962).
Moments ComputeMoments(std::span<const double> values);

}  // namespace knee
