// The steps every command shares: read the netlist, parse, apply overrides, elaborate,
// check the topology, and resolve the quantities to report.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "knee/netlist.h"
#include "options.h"

namespace knee::cli {

// What LoadDesign keeps of the netlist's text once it is parsed.
enum class SourceKept {
  kWhole,  // LoadedDesign::source holds it (commands that may quote lines later)
  // Dropped after parsing a file (standard input is kept): the statements hold their
  // names, and the elaboration's diagnostics read the file again (QuotedSource). For a
  // command that quotes no line after loading (a bias point: the solver's diagnostics
  // name elements and nodes), so that a large netlist's text is not held through its
  // elaboration.
  kForDiagnostics,
};

struct LoadedDesign {
  std::string file;    // as given ("-" for standard input)
  std::string source;  // the whole text; empty once dropped (SourceKept::kForDiagnostics)
  // A dropped text's size and hash, to tell whether the file read again is what was parsed.
  bool source_dropped = false;
  std::size_t source_size = 0;
  std::size_t source_hash = 0;
  std::optional<Netlist> netlist;
  std::optional<Design> design;
  Overrides overrides;
};

// Reads `file` ("-" = standard input) and takes it through every check. On any problem
// prints the diagnostics to standard error and returns nothing (exit status 2).
std::optional<LoadedDesign> LoadDesign(const std::string& file, const AnalysisOptions& options,
                                       SourceKept kept = SourceKept::kWhole);

// The text that diagnostics of `loaded` quote: its source, or when that was dropped the
// file read again into *holder, or "" (no line quoted) when the file no longer holds the
// text that was parsed.
std::string_view QuotedSource(const LoadedDesign& loaded, std::string* holder);

// The quantities to report: --show, else the file's show statements, else every node
// voltage and every element current. Prints diagnostics and returns nothing on error.
std::optional<std::vector<QuantityExpr>> ResolveShow(const LoadedDesign& loaded,
                                                     const AnalysisOptions& options);

// The whole text of `file` ("-" = standard input); nothing and *problem on failure.
std::optional<std::string> ReadSource(const std::string& file, std::string* problem);

// Prints diagnostics with the source lines quoted.
void PrintDiagnostics(const std::vector<Diagnostic>& diagnostics, std::string_view source);
// Diagnostics of command-line text located at OptionLocation: printed with the program's
// one prefix of command-line errors, "knee: error: OPTION: message".
void PrintOptionDiagnostics(std::vector<Diagnostic> diagnostics);
// The location of a problem in a command-line option (no line; the option's name or text).
SourceLocation OptionLocation(const std::string& option);

}  // namespace knee::cli
