// knee spread (cli.md, "knee spread"; docs/spread.md).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "exit_status.h"
#include "options.h"
#include "pipeline.h"
#include "report_spread.h"

namespace knee::cli {

struct SpreadOutcome {
  SpreadReport report;
  Outcome outcome;
  std::vector<std::string> notes;     // for standard error ("knee: note: ...")
  std::vector<std::string> warnings;  // "FILE:LINE:COL: warning: ..."
  std::string error;                  // bad input: nothing was solved

  SpreadOutcome& Fail(std::string message) {
    error = std::move(message);
    outcome.bad_input = true;
    return *this;
  }
};

// --yield P as a fraction ("99.9%" or "0.999"); nothing when `text` is empty.
std::optional<double> ParseYieldTarget(const std::string& text, std::string* problem);

// The spread of the bias point (`sweeps` empty) or of every sweep in `sweeps`.
SpreadOutcome AnalyzeSpread(const LoadedDesign& loaded,
                            const std::vector<std::vector<SweepAxis>>& sweeps,
                            const std::vector<QuantityExpr>& show, const AnalysisOptions& options);

}  // namespace knee::cli
