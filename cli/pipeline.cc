#include "pipeline.h"

#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <iterator>
#include <sstream>

#include "knee/diagnostics.h"
#include "knee/solver.h"

namespace knee::cli {
namespace {

// Netlists larger than this are refused before reading them whole (docs/errors.md).
constexpr std::streamsize kMaxFileBytes = std::streamsize{1} << 30;

SourceLocation OptionLocation(const std::string& option) {
  SourceLocation where;
  where.file = option;
  return where;
}

}  // namespace

std::optional<std::string> ReadSource(const std::string& file, std::string* problem) {
  std::ostringstream text;
  if (file == "-") {
    text << std::cin.rdbuf();
    return text.str();
  }
  std::error_code ec;
  if (std::filesystem::is_directory(file, ec)) {
    *problem = fmt::format("cannot read '{}': it is a folder, not a netlist", file);
    return std::nullopt;
  }
  std::ifstream in(file, std::ios::binary);
  if (!in) {
    *problem = fmt::format("cannot read '{}': {}", file, std::strerror(errno));
    return std::nullopt;
  }
  in.seekg(0, std::ios::end);
  const std::streamoff size = in.tellg();
  if (size > kMaxFileBytes) {
    *problem = fmt::format("cannot read '{}': {} bytes is more than the limit of {} bytes", file,
                           size, kMaxFileBytes);
    return std::nullopt;
  }
  in.seekg(0, std::ios::beg);
  if (size < 0) {  // not seekable (a pipe or a folder)
    in.clear();
  }
  text << in.rdbuf();
  if (in.bad()) {
    *problem = fmt::format("cannot read '{}': read error", file);
    return std::nullopt;
  }
  return text.str();
}

void PrintDiagnostics(const std::vector<Diagnostic>& diagnostics, const std::string& source) {
  std::fputs(FormatDiagnostics(diagnostics, source).c_str(), stderr);
}

std::optional<LoadedDesign> LoadDesign(const std::string& file, const AnalysisOptions& options) {
  LoadedDesign loaded;
  loaded.file = file;
  std::string problem;
  std::optional<std::string> source = ReadSource(file, &problem);
  if (!source) {
    fmt::print(stderr, "knee: error: {}\n", problem);
    return std::nullopt;
  }
  loaded.source = std::move(*source);
  const std::string shown_name = file == "-" ? "<stdin>" : file;

  Result<Netlist> netlist = ParseNetlist(loaded.source, shown_name);
  if (!netlist) {
    PrintDiagnostics(netlist.errors(), loaded.source);
    return std::nullopt;
  }
  loaded.netlist.emplace(std::move(netlist).value());

  for (const std::string& set : options.sets) {
    const size_t eq = set.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == set.size()) {
      PrintDiagnostics({Diagnostic{OptionLocation("--set"),
                                   fmt::format("'{}' is not NAME=VALUE", set),
                                   "write for example --set Rload=4k7",
                                   {}}},
                       "");
      return std::nullopt;
    }
    loaded.overrides.sets.push_back({set.substr(0, eq), set.substr(eq + 1)});
  }
  loaded.overrides.temp = options.temp;

  Result<Design> design = Elaborate(*loaded.netlist, loaded.overrides);
  if (!design) {
    PrintDiagnostics(design.errors(), loaded.source);
    return std::nullopt;
  }
  std::vector<Diagnostic> topology = CheckTopology(design->circuit);
  for (Diagnostic& d : topology) {
    if (d.where.file.empty()) d.where.file = shown_name;  // e.g. an empty circuit has no line
  }
  if (!topology.empty()) {
    PrintDiagnostics(topology, loaded.source);
    return std::nullopt;
  }
  // --expect QUANTITY=VALUE[~TOL] joins the file's expect statements.
  for (const std::string& text : options.expects) {
    Result<Expectation> e = ParseExpectOption(text, design->circuit, OptionLocation("--expect"));
    if (!e) {
      PrintDiagnostics(e.errors(), "");
      return std::nullopt;
    }
    design->expects.push_back(std::move(e).value());
  }
  loaded.design.emplace(std::move(design).value());
  return loaded;
}

std::optional<std::vector<QuantityExpr>> ResolveShow(const LoadedDesign& loaded,
                                                     const AnalysisOptions& options) {
  const Circuit& circuit = loaded.design->circuit;
  std::vector<QuantityExpr> show;
  if (!options.show.empty()) {
    std::vector<Diagnostic> errors;
    for (const std::string& text : SplitTopLevel(options.show, ',')) {
      Result<QuantityExpr> q = ParseQuantity(text, circuit, OptionLocation("--show"));
      if (q) {
        show.push_back(std::move(q).value());
      } else {
        for (const Diagnostic& d : q.errors()) errors.push_back(d);
      }
    }
    if (!errors.empty()) {
      PrintDiagnostics(errors, "");
      return std::nullopt;
    }
    return show;
  }
  if (!loaded.design->show.empty()) return loaded.design->show;
  show.reserve(circuit.nodes.size() - 1 + circuit.elements.size());
  for (size_t n = 1; n < circuit.nodes.size(); ++n) {
    show.push_back(PlainQuantity(circuit, {QuantityKind::kNodeVoltage, static_cast<int>(n)}));
  }
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    show.push_back(PlainQuantity(circuit, {QuantityKind::kElementCurrent, static_cast<int>(e)}));
  }
  return show;
}

}  // namespace knee::cli
