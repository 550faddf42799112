// Each analysis turns a loaded design into a Report and an Outcome.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "exit_status.h"
#include "knee/netlist.h"
#include "knee/sweep.h"
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

// Receives the CSV text of a streamed sweep as its points are solved; "" or a message.
using TextSink = std::function<std::string(std::string_view text)>;

// Most values (points of the slice times reported columns) a sweep report may hold in
// memory: tables, JSON and charts need every row at once (docs/sweeps.md, "Limits").
inline constexpr long long kMaxHeldValues = 10'000'000;

// A DC sweep over `axes` (axis 0 the inner loop), honouring --jobs and --shard. With a
// `stream`, the CSV rows go to it a window of blocks at a time and are not kept (nor are
// the point failures, which are printed as they are found); without, the report holds
// every row and a sweep above kMaxHeldValues is refused before anything is solved.
AnalysisResult AnalyzeSweep(const LoadedDesign& loaded, const std::vector<SweepAxis>& axes,
                            const std::vector<QuantityExpr>& show, const AnalysisOptions& options,
                            const TextSink* stream = nullptr);

// The values a held report of this sweep would keep (points of the --shard slice times
// columns, the CSV-only stress columns included); the largest long long when that does
// not fit one.
long long HeldSweepValues(const LoadedDesign& loaded, const std::vector<SweepAxis>& axes,
                          size_t shown, const AnalysisOptions& options);

// "knee: no solution at {where}: {why}" on standard error.
void PrintPointFailure(const PointFailure& failure);

// The TARGET=RANGE arguments of knee sweep; prints diagnostics and returns nothing on error.
std::optional<std::vector<SweepAxis>> ResolveCommandLineSweep(const LoadedDesign& loaded,
                                                              const AnalysisOptions& options);

// --shard K/N as a 0-based slice index and a count ("" = 0 of 1); N at most kMaxShards.
inline constexpr int kMaxShards = 1'000'000;
bool ParseShard(const std::string& text, int* shard, int* shards, std::string* problem);

// One expectation checked against a solution (error within the tolerance, finite).
ExpectationCheck CheckExpectation(const Expectation& e, const Solution& solution);

// Fills the header fields every report shares.
Report StartReport(const LoadedDesign& loaded, const char* analysis);

// Name of the solver method for reports.
const char* SolverMethodName(const SolverOptions& options);
// Name of the solver that produced a result (SolveSummary::method).
// The classic solver's name says whether junction limiting was on (--no-limiting).
const char* SolverMethodName(SolverMethod method, bool junction_limiting = true);

// The solver's account (the report footer, the JSON "solver" block) of every command,
// from the stats of all its solves (AddSolveToStats, MergeSweepStats): the one place that
// fills it, so that bias, hand, sweep, spread and sensitivity say the same of the same
// solves. The method is every solver that produced a point, else the one asked for.
SolverAccount AccountOf(const SweepStats& stats, const SolverOptions& options);
// AccountOf the stats of one bias-point solve.
SolverAccount BiasPointAccount(const SolveSummary& summary, const SolverOptions& options);

}  // namespace knee::cli
