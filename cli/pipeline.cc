#include "pipeline.h"

#include <fmt/format.h>
#include <unistd.h>

#include <cstdio>
#include <iostream>
#include <sstream>

#include "knee/design_steps.h"
#include "knee/diagnostics.h"
#include "knee/solver.h"

namespace knee::cli {

std::optional<std::string> ReadSource(const std::string& file, std::string* problem) {
  Result<std::string> text = ReadNetlistFile(file);
  if (!text) {
    *problem = text.errors().front().message;
    return std::nullopt;
  }
  return std::move(text).value();
}

SourceLocation OptionLocation(const std::string& option) {
  SourceLocation where;
  where.file = option;
  return where;
}

void PrintDiagnostics(const std::vector<Diagnostic>& diagnostics, std::string_view source) {
  std::fputs(FormatDiagnostics(diagnostics, source).c_str(), stderr);
}

void PrintOptionDiagnostics(std::vector<Diagnostic> diagnostics) {
  for (Diagnostic& d : diagnostics) {
    if (d.where.line > 0 || d.where.file.empty()) continue;
    d.message = d.where.file.str() + ": " + d.message;
    d.where.file = FileName();
  }
  PrintDiagnostics(diagnostics, "");
}

namespace {

std::size_t TextHash(std::string_view text) { return std::hash<std::string_view>{}(text); }

void DropSource(LoadedDesign* loaded) {
  loaded->source_dropped = true;
  loaded->source_size = loaded->source.size();
  loaded->source_hash = TextHash(loaded->source);
  std::string().swap(loaded->source);
}

}  // namespace

std::string_view QuotedSource(const LoadedDesign& loaded, std::string* holder) {
  if (!loaded.source_dropped) return loaded.source;
  Result<std::string> text = ReadNetlistFile(loaded.file);
  if (!text || text->size() != loaded.source_size || TextHash(*text) != loaded.source_hash) {
    return {};
  }
  *holder = std::move(text).value();
  return *holder;
}

std::optional<LoadedDesign> LoadDesign(const std::string& file, const AnalysisOptions& options,
                                       SourceKept kept) {
  LoadedDesign loaded;
  loaded.file = file;
  Result<std::string> source = ReadNetlistFile(file);
  if (!source) {
    fmt::print(stderr, "knee: error: {}\n", source.errors().front().message);
    return std::nullopt;
  }
  loaded.source = std::move(source).value();
  const std::string shown_name = file == "-" ? "<stdin>" : file;

  Result<Netlist> netlist = ParseNetlist(loaded.source, shown_name);
  if (!netlist) {
    PrintDiagnostics(netlist.errors(), loaded.source);
    return std::nullopt;
  }
  loaded.netlist.emplace(std::move(netlist).value());
  if (kept == SourceKept::kForDiagnostics && file != "-") DropSource(&loaded);

  for (const std::string& set : options.sets) {
    const size_t eq = set.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == set.size()) {
      PrintOptionDiagnostics({Diagnostic{OptionLocation("--set"),
                                         fmt::format("'{}' is not NAME=VALUE", set),
                                         "write for example --set Rload=4k7",
                                         {}}});
      return std::nullopt;
    }
    loaded.overrides.sets.push_back({set.substr(0, eq), set.substr(eq + 1)});
  }
  loaded.overrides.temp = options.temp;

  Result<Design> design = ElaborateChecked(*loaded.netlist, loaded.overrides);
  if (!design) {
    std::string holder;
    PrintDiagnostics(design.errors(), QuotedSource(loaded, &holder));
    return std::nullopt;
  }
  // Warnings go to standard error even with --quiet (cli.md, "Warnings"); --no-warn
  // silences them. They never change the exit status.
  if (!options.no_warn && !design->warnings.empty()) {
    std::string holder;
    const std::string_view text = QuotedSource(loaded, &holder);
    for (const Diagnostic& w : design->warnings) {
      fmt::print(stderr, "{}\n", FormatWarning(w, text));
    }
  }
  // --expect QUANTITY=VALUE[~TOL] joins the file's expect statements.
  for (const std::string& text : options.expects) {
    Result<Expectation> e =
        ParseExpectOption(text, design->circuit, OptionLocation("--expect"), &design->params);
    if (!e) {
      PrintOptionDiagnostics(e.errors());
      return std::nullopt;
    }
    design->expects.push_back(std::move(e).value());
  }
  loaded.design.emplace(std::move(design).value());
  return loaded;
}

std::optional<std::vector<QuantityExpr>> ResolveShow(const LoadedDesign& loaded,
                                                     const AnalysisOptions& options) {
  if (options.show.empty()) return DefaultShow(*loaded.design);
  Result<std::vector<QuantityExpr>> show = ParseQuantityList(
      options.show, loaded.design->circuit, OptionLocation("--show"), &loaded.design->params);
  if (!show) {
    PrintOptionDiagnostics(show.errors());
    return std::nullopt;
  }
  return std::move(show).value();
}

}  // namespace knee::cli
