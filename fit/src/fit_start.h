// Starting values of the fit from the points themselves (docs/fit.md, "Starting values"),
// and which points are breakdown points. Internal.
#pragma once

#include <array>
#include <vector>

#include "fit_law.h"

namespace knee::fit_internal {

// Reverse points whose current is beyond kLeakageFactor times the saturation current of
// the forward points: only the breakdown term of the law can carry them.
inline constexpr double kLeakageFactor = 10.0;

struct StartInput {
  const std::vector<FitPoint>* points = nullptr;
  DiodeModel model;                       // held and default values
  std::array<bool, kFitKeyCount> free{};  // the keys the fit moves
  bool breakdown = false;                 // the breakdown term is in play
};

// Start values: held keys as given, free keys from the points.
Params StartValues(const StartInput& in);

// Whether point p is a breakdown point under the forward parameters x.
bool IsBreakdownPoint(const Params& x, double ref_temp, const FitPoint& p);

}  // namespace knee::fit_internal
