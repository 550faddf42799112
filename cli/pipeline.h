// The steps every command shares: read the netlist, parse, apply overrides, elaborate,
// check the topology, and resolve the quantities to report.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "knee/netlist.h"
#include "options.h"

namespace knee::cli {

struct LoadedDesign {
  std::string file;    // as given ("-" for standard input)
  std::string source;  // the whole text
  std::optional<Netlist> netlist;
  std::optional<Design> design;
  Overrides overrides;
};

// Reads `file` ("-" = standard input) and takes it through every check. On any problem
// prints the diagnostics to standard error and returns nothing (exit status 2).
std::optional<LoadedDesign> LoadDesign(const std::string& file, const AnalysisOptions& options);

// The quantities to report: --show, else the file's show statements, else every node
// voltage and every element current. Prints diagnostics and returns nothing on error.
std::optional<std::vector<QuantityExpr>> ResolveShow(const LoadedDesign& loaded,
                                                     const AnalysisOptions& options);

// The whole text of `file` ("-" = standard input); nothing and *problem on failure.
std::optional<std::string> ReadSource(const std::string& file, std::string* problem);

// Prints diagnostics with the source lines quoted.
void PrintDiagnostics(const std::vector<Diagnostic>& diagnostics, const std::string& source);
// Diagnostics of command-line text located at OptionLocation: printed with the program's
// one prefix of command-line errors, "knee: error: OPTION: message".
void PrintOptionDiagnostics(std::vector<Diagnostic> diagnostics);
// The location of a problem in a command-line option (no line; the option's name or text).
SourceLocation OptionLocation(const std::string& option);

}  // namespace knee::cli
