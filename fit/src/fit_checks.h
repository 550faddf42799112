// What the fit refuses in the points (docs/fit.md, "Data the fit refuses"). Internal.
#pragma once

#include <vector>

#include "knee/fit.h"

namespace knee::fit_internal {

// Signs, weights, temperatures and monotonicity of the points; every problem found.
std::vector<Diagnostic> CheckPoints(const FitData& data);

Diagnostic DataError(const SourceLocation& where, std::string message, std::string hint = "");

}  // namespace knee::fit_internal
