// Each analysis turns a loaded design into a Report and an Outcome.
#pragma once

#include <optional>
#include <string>
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

// A DC sweep over `axes` (axis 0 the inner loop), honouring --jobs and --shard.
AnalysisResult AnalyzeSweep(const LoadedDesign& loaded, const std::vector<SweepAxis>& axes,
                            const std::vector<QuantityExpr>& show, const AnalysisOptions& options);

// The TARGET=RANGE arguments of knee sweep; prints diagnostics and returns nothing on error.
std::optional<std::vector<SweepAxis>> ResolveCommandLineSweep(const LoadedDesign& loaded,
                                                              const AnalysisOptions& options);

// --shard K/N as a 0-based slice index and a count ("" = 0 of 1).
bool ParseShard(const std::string& text, int* shard, int* shards, std::string* problem);

// One expectation checked against a solution (error within the tolerance, finite).
ExpectationCheck CheckExpectation(const Expectation& e, const Solution& solution);

// Why a point has no solution, for reports: "{status}: {detail}", except that a proven
// absence of a solution (SolveStatus::kNoSolution) is the detail alone, without the words
// "no solution" or "no DC solution" the report line already carries.
std::string FailureReason(const SolveSummary& summary);

// Fills the header fields every report shares.
Report StartReport(const LoadedDesign& loaded, const char* analysis);

// Name of the solver method for reports.
const char* SolverMethodName(const SolverOptions& options);
// Name of the solver that produced a result (SolveSummary::method).
// The classic solver's name says whether junction limiting was on (--no-limiting).
const char* SolverMethodName(SolverMethod method, bool junction_limiting = true);

}  // namespace knee::cli
