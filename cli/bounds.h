// Bounds (`expect Q <= VALUE`, `expect Q >= VALUE`; netlist-format.md, "Bounds"): checked
// at the bias point, at every point of every sweep and in every sample of a spread.
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "knee/netlist.h"
#include "report.h"

namespace knee::cli {

// A bound at one solution: the value, the bound's value there, and the margin (>= 0 where
// the bound holds; NaN when either value is not finite, which counts as broken).
struct BoundValue {
  double actual = 0;
  double limit = 0;
  double margin = 0;
  bool holds() const { return margin >= 0; }
};
BoundValue EvaluateBound(const Expectation& bound, const Solution& solution);

// Per point values of every bound of a design, recorded by index from any thread and
// reduced in point order, so that the report does not depend on thread timing.
class BoundRecorder {
 public:
  BoundRecorder(const std::vector<Expectation>& expects, long long points);
  bool empty() const { return bounds_.empty(); }
  void Record(long long point, const Solution& solution);  // thread-safe for distinct points
  // Appends one check per bound; `describe(point)` names a point ("" for a bias point).
  // Returns whether every bound held at every solved point.
  bool Finish(const std::function<std::string(long long)>& describe, Report* report) const;

 private:
  std::vector<const Expectation*> bounds_;
  long long points_;
  std::vector<BoundValue> values_;  // points x bounds; a point never recorded has NaN
  std::vector<char> recorded_;
};

}  // namespace knee::cli
