#include "report_common.h"

#include <fmt/format.h>

#include <charconv>
#include <cmath>

#include "eng_format.h"
#include "knee/solver.h"

namespace knee::cli {

size_t DisplayWidth(const std::string& text) {
  size_t width = 0;
  for (unsigned char c : text) width += (c & 0xC0) != 0x80 ? 1 : 0;
  return width;
}

std::string PadLeft(const std::string& text, size_t width) {
  const size_t w = DisplayWidth(text);
  return w >= width ? text : std::string(width - w, ' ') + text;
}

std::string PadRight(const std::string& text, size_t width) {
  const size_t w = DisplayWidth(text);
  return w >= width ? text : text + std::string(width - w, ' ');
}

std::string XmlEscape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '&':
        out += "&amp;";
        break;
      case '"':
        out += "&quot;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

void AppendRoundTrip(double value, fmt::memory_buffer& out) {
  const size_t at = out.size();
  out.resize(at + kRoundTripChars);
  const char* end = WriteRoundTrip(value, out.data() + at);
  out.resize(static_cast<size_t>(end - out.data()));
}

void AppendInteger(long long value, fmt::memory_buffer& out) {
  constexpr size_t kDigits = 24;  // a long long has at most 19 digits and a sign
  const size_t at = out.size();
  out.resize(at + kDigits);
  const char* end = std::to_chars(out.data() + at, out.data() + at + kDigits, value).ptr;
  out.resize(static_cast<size_t>(end - out.data()));
}

std::string CsvField(const std::string& text) {
  if (text.find_first_of(",\"\n\r") == std::string::npos) return text;
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  return quoted + "\"";
}

nlohmann::ordered_json JsonNumber(double value) {
  if (!std::isfinite(value)) return nullptr;
  return value;
}

nlohmann::ordered_json JsonLocation(const SourceLocation& where) {
  if (where.line == 0) return nullptr;
  return {{"file", where.file}, {"line", where.line}, {"column", where.column}};
}

// 'a', 'b' and 'c'
std::string QuotedList(const std::vector<std::string>& names) {
  std::string out;
  for (size_t i = 0; i < names.size(); ++i) {
    if (i > 0) out += i + 1 == names.size() ? " and " : ", ";
    out += "'" + names[i] + "'";
  }
  return out;
}

std::string UndeterminedNote(const SolverAccount& a) {
  if (a.undetermined_nodes.empty()) return "";
  const bool one = a.undetermined_nodes.size() == 1;
  return fmt::format(
      "note: node{} {} {} undetermined: a stray current of {:.3g} A can move {} by more than "
      "{:.3g} mV (held only by leakage or by saturated junctions, e.g. matched reverse-biased "
      "diodes in series with no other path), so {} set by leakage the model does not have\n",
      one ? "" : "s", QuotedList(a.undetermined_nodes), one ? "is" : "are", a.current_tol,
      one ? "it" : "them", 1e3 * kUndeterminedVolts, one ? "its voltage is" : "their voltages are");
}

nlohmann::ordered_json JsonSolverAccount(const SolverAccount& a) {
  nlohmann::ordered_json j = {{"method", a.method},
                              {"unique", a.unique},
                              {"points", a.points},
                              {"newton_steps", a.newton_steps},
                              {"max_newton_steps_per_point", a.max_newton_steps},
                              {"aids", a.aids},
                              {"max_kcl_residual_a", a.max_kcl_residual},
                              {"worst_node", a.worst_node},
                              {"undetermined_nodes", a.undetermined_nodes}};
  // Self-heating only, so that every existing report keeps its exact form.
  if (a.heated) {
    j["max_thermal_residual_k"] = a.max_thermal_residual;
    j["thermal_worst_diode"] = a.thermal_worst;
    j["thermal_notes"] = a.thermal_notes;
  }
  return j;
}

nlohmann::ordered_json JsonExpectation(const ExpectationCheck& e) {
  if (e.relation != "=") {
    nlohmann::ordered_json j = {
        {"quantity", e.quantity},
        {"unit", e.unit},
        {"relation", e.relation},
        {"bound",
         e.bound_text.empty() ? JsonNumber(e.expected) : nlohmann::ordered_json(e.bound_text)},
        {"met", e.met},
        {"points", e.points},
        {"failed_points", e.failed_points},
        {"worst",
         {{"actual", JsonNumber(e.actual)},
          {"bound", JsonNumber(e.worst_limit)},
          {"where", e.worst_where}}},
        {"first_failure", nullptr},
        {"location", JsonLocation(e.where)}};
    if (e.failed_points > 0) {
      j["first_failure"] = {{"actual", JsonNumber(e.first_actual)}, {"where", e.first_where}};
    }
    return j;
  }
  return {{"quantity", e.quantity},
          {"unit", e.unit},
          {"expected", e.expected},
          {"actual", JsonNumber(e.actual)},
          {"error", JsonNumber(e.actual - e.expected)},
          {"tolerance", e.tolerance},
          {"tolerance_kind", e.relative ? "relative" : "absolute"},
          {"met", e.met},
          {"location", JsonLocation(e.where)}};
}

}  // namespace knee::cli
