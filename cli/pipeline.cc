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

// Appends what `in` holds to *text, in chunks, and stops as soon as more than
// kMaxFileBytes arrived: a pipe or a device has no size to check first, so the limit is
// kept while reading. Reading also stops after a chunk holding a NUL byte: such a text is
// no netlist and the lexer refuses it (so /dev/zero ends at once).
// False when the limit was passed.
bool ReadBounded(std::istream& in, std::string* text) {
  constexpr std::streamsize kChunk = std::streamsize{1} << 20;
  std::string chunk(static_cast<size_t>(kChunk), '\0');
  while (in) {
    in.read(chunk.data(), kChunk);
    const std::streamsize got = in.gcount();
    if (got <= 0) break;
    if (static_cast<std::streamsize>(text->size()) + got > kMaxFileBytes) return false;
    text->append(chunk.data(), static_cast<size_t>(got));
    if (std::memchr(chunk.data(), '\0', static_cast<size_t>(got)) != nullptr) break;
  }
  return true;
}

std::string TooLarge(const std::string& file, const std::string& size) {
  return fmt::format("cannot read '{}': {} is more than the limit of {} bytes (1 GiB)",
                     file == "-" ? "<stdin>" : file, size, kMaxFileBytes);
}

}  // namespace

std::optional<std::string> ReadSource(const std::string& file, std::string* problem) {
  std::string text;
  if (file == "-") {
    if (!ReadBounded(std::cin, &text)) {
      *problem = TooLarge(file, "standard input");
      return std::nullopt;
    }
    if (std::cin.bad()) {
      *problem = "cannot read standard input: read error";
      return std::nullopt;
    }
    return text;
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
    *problem = TooLarge(file, fmt::format("{} bytes", size));
    return std::nullopt;
  }
  if (size < 0) {  // not seekable (a pipe or a device): the limit is kept while reading
    in.clear();
  } else {
    in.seekg(0, std::ios::beg);
    text.reserve(static_cast<size_t>(size));
  }
  if (!ReadBounded(in, &text)) {
    *problem = TooLarge(file, "its content");
    return std::nullopt;
  }
  if (in.bad()) {
    *problem = fmt::format("cannot read '{}': read error", file);
    return std::nullopt;
  }
  return text;
}

SourceLocation OptionLocation(const std::string& option) {
  SourceLocation where;
  where.file = option;
  return where;
}

void PrintDiagnostics(const std::vector<Diagnostic>& diagnostics, const std::string& source) {
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
      PrintOptionDiagnostics({Diagnostic{OptionLocation("--set"),
                                         fmt::format("'{}' is not NAME=VALUE", set),
                                         "write for example --set Rload=4k7",
                                         {}}});
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
  // Warnings go to standard error even with --quiet (cli.md, "Warnings"); --no-warn
  // silences them. They never change the exit status.
  if (!options.no_warn) {
    for (const Diagnostic& w : design->warnings) {
      fmt::print(stderr, "{}\n", FormatWarning(w, loaded.source));
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
  const Circuit& circuit = loaded.design->circuit;
  std::vector<QuantityExpr> show;
  if (!options.show.empty()) {
    std::vector<Diagnostic> errors;
    for (const std::string& text : SplitTopLevel(options.show, ',')) {
      Result<QuantityExpr> q =
          ParseQuantity(text, circuit, OptionLocation("--show"), &loaded.design->params);
      if (q) {
        show.push_back(std::move(q).value());
      } else {
        for (const Diagnostic& d : q.errors()) errors.push_back(d);
      }
    }
    if (!errors.empty()) {
      PrintOptionDiagnostics(std::move(errors));
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
