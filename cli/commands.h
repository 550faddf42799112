// One function per command of cli.md; each returns the process exit status.
#pragma once

#include <string>

#include "options.h"

namespace knee::cli {

// Prints "knee: error: MESSAGE" and returns the bad-input exit status.
int FailWith(const std::string& message);

// Checks the options and that --out and --plot can be written, before any work is done;
// "" or a message.
std::string PrepareOptions(AnalysisOptions* options);

int RunCheck(const std::string& file, AnalysisOptions options);
int RunBias(const std::string& file, AnalysisOptions options);
int RunSweep(const std::string& file, AnalysisOptions options);
int RunRun(const std::string& file, AnalysisOptions options);
int RunHand(const std::string& file, AnalysisOptions options);  // cli/analysis_hand.cc
int RunSpread(const std::string& file, AnalysisOptions options);

}  // namespace knee::cli
