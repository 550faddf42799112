#include "sensitivity_budget.h"

#include <cmath>

namespace knee::cli {

Budget ComputeBudget(
    std::span<const SpreadEntry> entries,
    const std::function<std::optional<double>(const std::string&)>& derivative_of) {
  Budget b;
  double squares = 0.0;
  for (const SpreadEntry& e : entries) {
    Contribution c;
    c.target = e.target;
    c.spread = e.spread;
    c.derivative = derivative_of(e.target).value_or(0.0);
    c.contribution = e.spread * c.derivative;
    b.worst_case += std::fabs(c.contribution);
    squares += c.contribution * c.contribution;
    b.contributions.push_back(std::move(c));
  }
  b.rss = std::sqrt(squares);
  return b;
}

}  // namespace knee::cli
