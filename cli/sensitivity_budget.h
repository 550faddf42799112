// The linear tolerance budget of one quantity (docs/sensitivity.md, "Tolerance budget"):
// each varied target's contribution (its half-width spread times the derivative), the
// linear worst case (the sum of their magnitudes) and the root-sum-square total.
#pragma once

#include <functional>
#include <optional>
#include <span>
#include <string>
#include <vector>

namespace knee::cli {

// One varied target: its name as the report prints it ("R1", "SIG.sat_current") and the
// half-width of its spread in the target's own unit (nominal +- spread).
struct SpreadEntry {
  std::string target;
  double spread = 0.0;
};

struct Contribution {
  std::string target;
  double spread = 0.0;
  double derivative = 0.0;    // dQ/d target
  double contribution = 0.0;  // spread * derivative, in Q's unit
};

struct Budget {
  std::vector<Contribution> contributions;  // in the order of the entries
  double worst_case = 0.0;                  // sum of |contribution|
  double rss = 0.0;                         // sqrt(sum of contribution^2)
};

// derivative_of(target) is dQ/d target, or nothing when Q does not depend on it (a
// target named in the entries but outside the circuit counts as 0). An empty list gives
// an empty budget with both totals 0.
Budget ComputeBudget(std::span<const SpreadEntry> entries,
                     const std::function<std::optional<double>(const std::string&)>& derivative_of);

}  // namespace knee::cli
