#include "bounds.h"

#include <cmath>
#include <limits>

namespace knee::cli {

BoundValue EvaluateBound(const Expectation& bound, const Solution& solution) {
  BoundValue v;
  v.actual = bound.quantity.Evaluate(solution);
  v.limit = bound.BoundAt(solution);
  v.margin =
      bound.relation == Expectation::Relation::kAtMost ? v.limit - v.actual : v.actual - v.limit;
  if (!std::isfinite(v.actual) || !std::isfinite(v.limit)) {
    v.margin = std::numeric_limits<double>::quiet_NaN();
  }
  return v;
}

BoundRecorder::BoundRecorder(const std::vector<Expectation>& expects, long long points)
    : points_(points) {
  for (const Expectation& e : expects) {
    if (e.is_bound()) bounds_.push_back(&e);
  }
  if (bounds_.empty()) return;
  values_.resize(static_cast<size_t>(points) * bounds_.size());
  recorded_.assign(static_cast<size_t>(points), 0);
}

void BoundRecorder::Record(long long point, const Solution& solution) {
  if (bounds_.empty()) return;
  const size_t base = static_cast<size_t>(point) * bounds_.size();
  for (size_t b = 0; b < bounds_.size(); ++b) {
    values_[base + b] = EvaluateBound(*bounds_[b], solution);
  }
  recorded_[static_cast<size_t>(point)] = 1;
}

bool BoundRecorder::Finish(const std::function<std::string(long long)>& describe,
                           Report* report) const {
  bool all_held = true;
  for (size_t b = 0; b < bounds_.size(); ++b) {
    const Expectation& e = *bounds_[b];
    ExpectationCheck check;
    check.quantity = e.quantity.text();
    check.unit = e.quantity.unit();
    check.relation = e.relation == Expectation::Relation::kAtMost ? "<=" : ">=";
    check.expected = e.bound ? std::numeric_limits<double>::quiet_NaN() : e.expected;
    check.bound_text = e.bound ? e.bound->text() : "";
    check.relative = false;
    check.tolerance = 0;
    check.where = e.where;
    long long worst = -1;
    double worst_margin = 0;
    long long first = -1;
    for (long long p = 0; p < points_; ++p) {
      if (!recorded_[static_cast<size_t>(p)]) continue;
      const BoundValue& v = values_[static_cast<size_t>(p) * bounds_.size() + b];
      ++check.points;
      const bool holds = v.holds();
      if (!holds) {
        ++check.failed_points;
        if (first < 0) first = p;
      }
      // The worst point: a broken one with NaN beats everything, else the least margin.
      const bool nan = std::isnan(v.margin);
      if (worst < 0 || (nan && !std::isnan(worst_margin)) ||
          (!nan && !std::isnan(worst_margin) && v.margin < worst_margin)) {
        worst = p;
        worst_margin = v.margin;
      }
    }
    check.met = check.failed_points == 0;
    if (first >= 0) {
      check.first_where = describe(first);
      check.first_actual = values_[static_cast<size_t>(first) * bounds_.size() + b].actual;
    }
    if (worst >= 0) {
      const BoundValue& v = values_[static_cast<size_t>(worst) * bounds_.size() + b];
      check.actual = v.actual;
      check.worst_limit = v.limit;
      check.worst_where = describe(worst);
    } else {
      check.actual = std::numeric_limits<double>::quiet_NaN();
      check.worst_limit = check.expected;
    }
    all_held = all_held && check.met;
    report->expectations.push_back(std::move(check));
  }
  return all_held;
}

}  // namespace knee::cli
