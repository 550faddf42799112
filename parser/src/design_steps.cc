#include "knee/design_steps.h"

#include <fmt/format.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <sstream>

#include "knee/solver.h"

namespace knee {
namespace {

Diagnostic FileProblem(const std::string& path, std::string message) {
  SourceLocation where;
  where.file = path;
  return Diagnostic{where, std::move(message), "", {}};
}

// Appends what `in` holds to *text, in chunks, and stops as soon as more than
// kMaxNetlistBytes arrived: a pipe or a device has no size to check first, so the limit is
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
    if (static_cast<long long>(text->size()) + got > kMaxNetlistBytes) return false;
    text->append(chunk.data(), static_cast<size_t>(got));
    if (std::memchr(chunk.data(), '\0', static_cast<size_t>(got)) != nullptr) break;
  }
  return true;
}

std::string TooLarge(const std::string& file, const std::string& size) {
  return fmt::format("cannot read '{}': {} is more than the limit of {} bytes (1 GiB)",
                     file == "-" ? "<stdin>" : file, size, kMaxNetlistBytes);
}

}  // namespace

Result<std::string> ReadNetlistFile(const std::string& path) {
  std::string text;
  if (path == "-") {
    if (!ReadBounded(std::cin, &text)) return FileProblem(path, TooLarge(path, "standard input"));
    if (std::cin.bad()) return FileProblem(path, "cannot read standard input: read error");
    return text;
  }
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) {
    return FileProblem(path, fmt::format("cannot read '{}': it is a folder, not a netlist", path));
  }
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    return FileProblem(path, fmt::format("cannot read '{}': {}", path, std::strerror(errno)));
  }
  in.seekg(0, std::ios::end);
  const std::streamoff size = in.tellg();
  if (size > kMaxNetlistBytes) {
    return FileProblem(path, TooLarge(path, fmt::format("{} bytes", size)));
  }
  if (size < 0) {  // not seekable (a pipe or a device): the limit is kept while reading
    in.clear();
  } else {
    in.seekg(0, std::ios::beg);
    text.reserve(static_cast<size_t>(size));
  }
  if (!ReadBounded(in, &text)) return FileProblem(path, TooLarge(path, "its content"));
  if (in.bad()) return FileProblem(path, fmt::format("cannot read '{}': read error", path));
  return text;
}

Result<Design> ElaborateChecked(const Netlist& netlist, const Overrides& overrides) {
  Result<Design> design = Elaborate(netlist, overrides);
  if (!design) return design;
  std::vector<Diagnostic> topology = CheckTopology(design->circuit);
  if (topology.empty()) return design;
  for (Diagnostic& d : topology) {
    if (d.where.file.empty()) d.where.file = netlist.file_name();  // e.g. an empty circuit
  }
  return topology;
}

std::vector<std::string> SplitTopLevel(std::string_view text, char separator) {
  std::vector<std::string> parts;
  std::string current;
  int depth = 0;
  for (char c : text) {
    if (c == '(') ++depth;
    if (c == ')' && depth > 0) --depth;
    if (c == separator && depth == 0) {
      parts.push_back(current);
      current.clear();
      continue;
    }
    current += c;
  }
  parts.push_back(current);
  for (std::string& part : parts) {
    const size_t first = part.find_first_not_of(" \t");
    const size_t last = part.find_last_not_of(" \t");
    part = first == std::string::npos ? "" : part.substr(first, last - first + 1);
  }
  return parts;
}

Result<std::vector<QuantityExpr>> ParseQuantityList(std::string_view text, const Circuit& circuit,
                                                    const SourceLocation& where,
                                                    const ParamValues* params) {
  std::vector<QuantityExpr> quantities;
  std::vector<Diagnostic> errors;
  for (const std::string& item : SplitTopLevel(text, ',')) {
    Result<QuantityExpr> q = ParseQuantity(item, circuit, where, params);
    if (q) {
      quantities.push_back(std::move(q).value());
    } else {
      for (const Diagnostic& d : q.errors()) errors.push_back(d);
    }
  }
  if (!errors.empty()) return errors;
  return quantities;
}

std::vector<QuantityExpr> DefaultShow(const Design& design) {
  if (!design.show.empty()) return design.show;
  const Circuit& circuit = design.circuit;
  std::vector<QuantityExpr> show;
  show.reserve(circuit.nodes.size() - 1 + circuit.elements.size());
  for (size_t n = 1; n < circuit.nodes.size(); ++n) {
    show.push_back(PlainQuantity(circuit, {QuantityKind::kNodeVoltage, static_cast<int>(n)}));
  }
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    show.push_back(PlainQuantity(circuit, {QuantityKind::kElementCurrent, static_cast<int>(e)}));
  }
  // Self-heating (docs/thermal.md): each heated diode's junction temperature and
  // dissipation, and each heatsink's temperature.
  if (circuit.sink_mounts.empty() &&
      std::none_of(circuit.parts.begin(), circuit.parts.end(),
                   [](const Part& p) { return p.model.thermal_res.has_value(); })) {
    return show;
  }
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    const int element = static_cast<int>(e);
    if (!circuit.SelfHeated(element)) continue;
    show.push_back(PlainQuantity(circuit, {QuantityKind::kJunctionTemp, element}));
    show.push_back(PlainQuantity(circuit, {QuantityKind::kElementPower, element}));
  }
  for (size_t k = 0; k < circuit.heatsinks.size(); ++k) {
    show.push_back(PlainQuantity(circuit, {QuantityKind::kSinkTemp, static_cast<int>(k)}));
  }
  return show;
}

SweepGrid MakeSweepGrid(const std::vector<SweepAxis>& axes) {
  SweepGrid grid;
  for (const SweepAxis& axis : axes) grid.axes.push_back(axis.values);
  return grid;
}

ApplyPoint MakePointApplier(const Netlist& netlist, const Overrides& overrides,
                            const std::vector<SweepAxis>& axes) {
  std::vector<SweepTarget> targets;
  bool any_param = false;
  for (const SweepAxis& axis : axes) {
    targets.push_back(axis.target);
    any_param |= axis.target.kind == SweepTarget::Kind::kParam;
  }
  return [netlist, overrides, targets = std::move(targets), any_param](
             std::span<const double> values, Circuit* circuit) -> std::string {
    if (any_param) {
      Overrides here = overrides;
      for (size_t a = 0; a < targets.size(); ++a) {
        if (targets[a].kind != SweepTarget::Kind::kParam) continue;
        // Shortest text that reads back to exactly this value, so the point is the grid
        // value itself.
        here.sets.push_back({targets[a].name, fmt::format("{}", values[a])});
      }
      Result<Circuit> fresh = ElaborateCircuit(netlist, here);
      if (!fresh) return fresh.errors().front().message;
      *circuit = std::move(fresh).value();
    }
    for (size_t a = 0; a < targets.size(); ++a) {
      std::string problem = ApplySweepValue(targets[a], values[a], circuit);
      if (!problem.empty()) return problem;
    }
    return "";
  };
}

std::string DescribeFailure(const SolveSummary& summary) {
  if (summary.status != SolveStatus::kNoSolution) {
    return fmt::format("{}: {}", ToString(summary.status), summary.detail);
  }
  // A no-solution detail already says so; the status would repeat it.
  std::string_view detail = summary.detail;
  for (std::string_view lead : {"no solution: ", "no DC solution: "}) {
    if (detail.starts_with(lead)) detail.remove_prefix(lead.size());
  }
  return std::string(detail);
}

}  // namespace knee
