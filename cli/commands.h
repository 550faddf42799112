// One function per command of cli.md; each returns the process exit status.
#pragma once

#include <string>

#include "options.h"

namespace knee::cli {

int RunCheck(const std::string& file, AnalysisOptions options);
int RunBias(const std::string& file, AnalysisOptions options);
int RunSweep(const std::string& file, AnalysisOptions options);
int RunRun(const std::string& file, AnalysisOptions options);
int RunHand(const std::string& file, AnalysisOptions options);  // cli/analysis_hand.cc

}  // namespace knee::cli
