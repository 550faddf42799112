// Each analysis turns a loaded design into a Report and an Outcome.
#pragma once

#include <vector>

#include "exit_status.h"
#include "knee/netlist.h"
#include "options.h"
#include "pipeline.h"
#include "report.h"

namespace knee::cli {

struct AnalysisResult {
  Report report;
  Outcome outcome;
};

// The exact bias point, with the design's expectations checked against it.
AnalysisResult AnalyzeBias(const LoadedDesign& loaded, const std::vector<QuantityExpr>& show,
                           const AnalysisOptions& options);

// Fills the header fields every report shares.
Report StartReport(const LoadedDesign& loaded, const char* analysis);

// Name of the solver method for reports.
const char* SolverMethodName(const SolverOptions& options);

}  // namespace knee::cli
