#include "fit_checks.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>

#include "knee/diode_law.h"

namespace knee::fit_internal {

Diagnostic DataError(const SourceLocation& where, std::string message, std::string hint) {
  Diagnostic d;
  d.where = where;
  d.message = std::move(message);
  d.hint = std::move(hint);
  return d;
}

std::vector<Diagnostic> CheckPoints(const FitData& data) {
  std::vector<Diagnostic> errors;
  if (data.points.empty()) {
    errors.push_back(DataError(data.header_where, "the file has a header but no points",
                               "add one row per point below the header"));
    return errors;
  }
  for (const FitPoint& p : data.points) {
    if (p.v > 0 && !(p.i > 0)) {
      errors.push_back(
          DataError(p.i_where,
                    fmt::format("a forward point (v = {:g} V > 0) needs a positive current, not "
                                "{:g} A",
                                p.v, p.i),
                    "correct the sign of the current or remove the row"));
    } else if (p.v < 0 && !(p.i < 0)) {
      errors.push_back(DataError(
          p.i_where,
          fmt::format("a reverse point (v = {:g} V < 0) needs a negative current, not "
                      "{:g} A",
                      p.v, p.i),
          "reverse points have negative v and negative i; correct the sign or remove the row"));
    } else if (p.v == 0) {
      errors.push_back(DataError(p.v_where,
                                 "a point at v = 0 carries no current in the diode law and "
                                 "says nothing about the part",
                                 "remove the row"));
    }
    if (!(p.weight > 0) || !std::isfinite(p.weight)) {
      errors.push_back(DataError(p.weight_where,
                                 fmt::format("weight {:g} is not a positive number", p.weight),
                                 "give each point a weight > 0, or leave the weight column out"));
    }
    if (!(p.temp > -kZeroCelsius)) {
      errors.push_back(
          DataError(p.temp_where, fmt::format("temperature {:g} C is not above absolute zero "
                                              "(-273.15 C)",
                                              p.temp)));
    }
  }
  if (!errors.empty()) return errors;
  // The law's current rises strictly with the voltage at every temperature: two points of
  // one temperature whose currents do not rise with their voltages cannot both be right.
  std::map<double, std::vector<const FitPoint*>> by_temp;
  for (const FitPoint& p : data.points) by_temp[p.temp].push_back(&p);
  for (auto& [t, group] : by_temp) {
    std::vector<const FitPoint*> sorted = group;
    std::stable_sort(sorted.begin(), sorted.end(),
                     [](const FitPoint* a, const FitPoint* b) { return a->v < b->v; });
    for (size_t k = 1; k < sorted.size(); ++k) {
      const FitPoint& a = *sorted[k - 1];
      const FitPoint& b = *sorted[k];
      const bool same_v = a.v == b.v;
      if (same_v ? a.i == b.i : b.i > a.i) continue;
      const bool b_later = b.i_where.line > a.i_where.line;
      const FitPoint& later = b_later ? b : a;
      const FitPoint& earlier = b_later ? a : b;
      Diagnostic d = DataError(
          later.i_where,
          same_v ? fmt::format("two points at v = {:g} V ({:g} C) have different currents, {:g} A "
                               "and {:g} A",
                               b.v, t, a.i, b.i)
                 : fmt::format("the points are not monotone at {:g} C: the current falls from "
                               "{:g} A at {:g} V to {:g} A at {:g} V, but a diode's current rises "
                               "with its voltage",
                               t, a.i, a.v, b.i, b.v),
          "correct or remove one of the two rows");
      d.notes.push_back({earlier.i_where, "the other point is here"});
      errors.push_back(std::move(d));
    }
  }
  return errors;
}

}  // namespace knee::fit_internal
