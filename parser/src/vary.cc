// vary TARGET SPREAD [uniform|normal] [each]: see vary.h and docs/spread.md.
#include "vary.h"

#include <fmt/format.h>

#include <cmath>
#include <string>
#include <string_view>

#include "expr.h"
#include "knee/diagnostics.h"
#include "knee/diode_law.h"
#include "lexer.h"
#include "part_keys.h"

namespace knee {
namespace {

// The place of bytes [begin, end) of the spread text within its statement.
Span SubSpan(const Span& whole, std::string_view text, std::size_t begin, std::size_t end) {
  Span s = whole;
  s.column += CountChars(text.substr(0, begin));
  s.length = std::max(1, CountChars(text.substr(begin, end - begin)));
  return s;
}

class VaryResolver {
 public:
  VaryResolver(const VaryStmt& stmt, const FileName& file, const Circuit& circuit)
      : stmt_(stmt), file_(file), circuit_(circuit), text_(stmt.spread) {}

  Diagnostic Error(std::size_t begin, std::size_t end, std::string message,
                   std::string hint = "") const {
    return MakeError(file_, SubSpan(stmt_.spread_span, text_, begin, end), std::move(message),
                     std::move(hint));
  }

  // A number literal of bytes [begin, end) at `place` (unit checked, kelvin converted).
  Result<double> Number(std::size_t begin, std::size_t end, const ValuePlace& place,
                        const char* what) const {
    const std::string_view literal_text = text_.substr(begin, end - begin);
    if (literal_text.empty()) {
      return Error(begin, end, fmt::format("expected {} but found nothing", what));
    }
    NumberLiteral literal;
    NumberError error;
    if (!ParseNumber(literal_text, &literal, &error)) {
      return Error(begin + error.offset, begin + error.offset + error.length, error.message,
                   error.hint);
    }
    double value = 0;
    std::string message, hint;
    if (!ApplyPlace(literal, literal_text, place, &value, &message, &hint)) {
      return Error(begin + literal.unit_offset, end, message, hint);
    }
    return value;
  }

  // ±TOL or +-TOL starting at byte `begin`: the tolerance in the target's unit.
  Result<double> Tolerance(std::size_t begin, const ValuePlace& place, double nominal) const {
    const std::string_view tol_text = text_.substr(begin);
    NumberLiteral literal;
    NumberError error;
    if (tol_text.empty()) {
      return Error(begin, text_.size(), "expected a tolerance after '±' but found nothing",
                   "write for example ±1% or ±50m");
    }
    if (!ParseNumber(tol_text, &literal, &error)) {
      return Error(begin + error.offset, begin + error.offset + error.length, error.message,
                   error.hint);
    }
    double tol = literal.value;
    if (literal.unit == "%") {
      tol = literal.value * std::fabs(nominal);
    } else if (place.unit == "C") {
      // A temperature difference: kelvin and degrees Celsius are the same size.
      if (!literal.unit.empty() && literal.unit != "C" && literal.unit != "K") {
        return Error(begin + literal.unit_offset, text_.size(),
                     fmt::format("unit '{}' does not fit a temperature tolerance", literal.unit),
                     "write it in K, C or %");
      }
    } else {
      std::string message, hint;
      if (!ApplyPlace(literal, tol_text, place, &tol, &message, &hint)) {
        return Error(begin + literal.unit_offset, text_.size(), message, hint);
      }
    }
    if (literal.value < 0) {
      return Error(begin, text_.size(),
                   fmt::format("negative tolerance '{}': a tolerance spreads both ways and is "
                               ">= 0",
                               tol_text),
                   fmt::format("write ±{}", tol_text.substr(1)));
    }
    return tol;
  }

  const VaryStmt& stmt_;
  const FileName& file_;
  const Circuit& circuit_;
  std::string_view text_;
};

// The value of the target in the circuit, or a message why it has none.
std::optional<double> Nominal(const SweepTarget& t, const Circuit& c,
                              std::optional<double> param_value) {
  switch (t.kind) {
    case SweepTarget::Kind::kTemp:
      return c.temp;
    case SweepTarget::Kind::kElement:
      return c.elements[static_cast<std::size_t>(t.index)].value;
    case SweepTarget::Kind::kPartKey:
      return GetPartKey(c.parts[static_cast<std::size_t>(t.index)].model, t.key);
    case SweepTarget::Kind::kParam:
      return param_value;
  }
  return std::nullopt;
}

// "" or the rule that `value` breaks at the target's place.
std::string BrokenRule(const SweepTarget& t, const Circuit& c, double value) {
  if (!std::isfinite(value)) return "a finite number";
  switch (t.kind) {
    case SweepTarget::Kind::kTemp:
      return value > -kZeroCelsius ? "" : "above absolute zero (-273.15 C)";
    case SweepTarget::Kind::kElement:
      if (c.elements[static_cast<std::size_t>(t.index)].kind == ElementKind::kResistor) {
        return value > 0 ? "" : "> 0 (a resistance)";
      }
      return "";
    case SweepTarget::Kind::kPartKey: {
      const PartKeyInfo* info = FindPartKey(t.key);
      return info && PartKeyValueOk(*info, value) ? "" : std::string(info ? info->rule : "");
    }
    case SweepTarget::Kind::kParam:
      return "";
  }
  return "";
}

}  // namespace

Result<VaryLine> ResolveVary(const VaryStmt& stmt, const FileName& file, const Netlist& netlist,
                             const Circuit& circuit, std::optional<double> param_value) {
  const SourceLocation target_where = ToLocation(file, stmt.target_span);
  Result<SweepTarget> target = ResolveSweepTarget(stmt.target, netlist, circuit, target_where);
  if (!target.ok()) {
    std::vector<Diagnostic> errors = std::move(target).take_errors();
    for (Diagnostic& d : errors) {
      // ResolveSweepTarget speaks of sweeps; here it is a vary line.
      const std::size_t at = d.message.find("sweep target");
      if (at != std::string::npos) d.message.replace(at, 12, "vary target");
    }
    return errors;
  }
  VaryLine line;
  line.target = std::move(*target);
  line.distribution = stmt.distribution;
  line.each = stmt.each;
  line.spread_text = stmt.spread;
  line.where = target_where;
  line.spread_where = ToLocation(file, stmt.spread_span);
  if (stmt.each && line.target.kind != SweepTarget::Kind::kPartKey) {
    return MakeError(file, stmt.each_span,
                     fmt::format("'each' gives every diode of a part its own draw of a part key; "
                                 "the target '{}' is not a part key (PART.key)",
                                 stmt.target),
                     "remove 'each', or vary a key of a part, e.g. SIG.sat_current");
  }
  std::optional<double> nominal = Nominal(line.target, circuit, param_value);
  if (!nominal) {
    return MakeError(
        file, stmt.target_span,
        fmt::format("'{}' has no value to vary: the part does not set it", stmt.target),
        fmt::format("give the part a value for {} first", line.target.key));
  }
  line.nominal = *nominal;
  VaryResolver r(stmt, file, circuit);
  const std::string_view text = stmt.spread;
  const ValuePlace place = TargetPlace(line.target, circuit);
  const std::size_t dots = text.find("..");
  const bool plus_minus_sign = text.starts_with("±");
  if (plus_minus_sign || text.starts_with("+-")) {
    const std::size_t begin = plus_minus_sign ? std::string_view("±").size() : 2;
    Result<double> tol = r.Tolerance(begin, place, line.nominal);
    if (!tol.ok()) return std::move(tol).take_errors();
    line.form = VaryLine::Form::kTolerance;
    line.low = line.nominal - *tol;
    line.high = line.nominal + *tol;
  } else if (dots != std::string_view::npos) {
    Result<double> a = r.Number(0, dots, place, "the low end of the range before '..'");
    if (!a.ok()) return std::move(a).take_errors();
    Result<double> b =
        r.Number(dots + 2, text.size(), place, "the high end of the range after '..'");
    if (!b.ok()) return std::move(b).take_errors();
    if (*a > *b) {
      return r.Error(0, text.size(),
                     fmt::format("range '{}' runs downward; a spread is written low..high", text),
                     fmt::format("write {}..{}", text.substr(dots + 2), text.substr(0, dots)));
    }
    line.form = VaryLine::Form::kRange;
    line.low = *a;
    line.high = *b;
    if (!(line.low <= line.nominal && line.nominal <= line.high)) {
      line.note = fmt::format(
          "the range {} of '{}' does not contain its nominal value {}: every sample moves it off "
          "the nominal (intended for a supply range, probably a typo otherwise)",
          text, stmt.target, fmt::format("{:g}", line.nominal));
    }
  } else if (text.starts_with("x")) {
    Result<double> f = r.Number(1, text.size(), ValuePlace{"a factor", ""}, "a factor after 'x'");
    if (!f.ok()) return std::move(f).take_errors();
    if (!(*f >= 1)) {
      return r.Error(1, text.size(),
                     fmt::format("factor {} is below 1; xF spreads within a factor F either way, "
                                 "so F >= 1",
                                 text.substr(1)),
                     fmt::format("for a spread of 1/{} to {} write x{}", text.substr(1),
                                 text.substr(1), fmt::format("{:g}", 1 / *f)));
    }
    if (line.nominal == 0) {
      return r.Error(
          0, text.size(),
          fmt::format("a factor spread needs a nonzero nominal value; '{}' is 0", stmt.target),
          "use ±TOL or A..B");
    }
    line.form = VaryLine::Form::kFactor;
    line.factor = *f;
    line.low = std::min(line.nominal / *f, line.nominal * *f);
    line.high = std::max(line.nominal / *f, line.nominal * *f);
  } else {
    return r.Error(0, text.size(),
                   fmt::format("expected a spread (±TOL, +-TOL, A..B or xF) but found '{}'", text),
                   "write for example ±1%, +-50m, 20..28 or x3");
  }
  for (const double limit : {line.low, line.high}) {
    const std::string rule = BrokenRule(line.target, circuit, limit);
    if (!rule.empty()) {
      return r.Error(0, text.size(),
                     fmt::format("the spread {} takes '{}' to {}, but the value must be {}", text,
                                 stmt.target, fmt::format("{:g}", limit), rule),
                     "use a smaller spread or a factor (xF) for a positive value");
    }
  }
  return line;
}

}  // namespace knee
