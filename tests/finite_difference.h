// Derivatives by central finite differences with Richardson extrapolation, for checks of
// analytic derivatives. Ridders' method: a table of central differences at steps falling
// by a factor 1.4 from h0, extrapolated column by column, keeping the entry whose
// successive extrapolations agree best (C. J. F. Ridders, "Accurate computation of F'(x)
// and F'(x)F''(x)", Advances in Engineering Software 4(2), 1982; the constants 1.4, 10
// levels and the stop rule as in Numerical Recipes' dfridr, recalled from memory).
#pragma once

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

namespace knee::testing {

struct FiniteDifference {
  double derivative = 0.0;
  double error = 0.0;  // the table's own estimate of its error
};

template <typename F>
FiniteDifference RiddersDerivative(const F& f, double x, double h0) {
  constexpr int kLevels = 10;
  constexpr double kShrink = 1.4, kShrink2 = kShrink * kShrink, kSafe = 2.0;
  std::array<std::array<double, kLevels>, kLevels> a{};
  double h = h0;
  const auto central = [&](double step) { return (f(x + step) - f(x - step)) / (2.0 * step); };
  a[0][0] = central(h);
  FiniteDifference best{a[0][0], std::numeric_limits<double>::infinity()};
  for (int i = 1; i < kLevels; ++i) {
    h /= kShrink;
    a[0][static_cast<size_t>(i)] = central(h);
    double factor = kShrink2;
    for (int j = 1; j <= i; ++j) {
      const auto ji = static_cast<size_t>(j), ii = static_cast<size_t>(i);
      a[ji][ii] = (a[ji - 1][ii] * factor - a[ji - 1][ii - 1]) / (factor - 1.0);
      factor *= kShrink2;
      const double e =
          std::max(std::fabs(a[ji][ii] - a[ji - 1][ii]), std::fabs(a[ji][ii] - a[ji - 1][ii - 1]));
      if (e <= best.error) best = {a[ji][ii], e};
    }
    const auto ii = static_cast<size_t>(i);
    if (std::fabs(a[ii][ii] - a[ii - 1][ii - 1]) >= kSafe * best.error) break;
  }
  return best;
}

}  // namespace knee::testing
