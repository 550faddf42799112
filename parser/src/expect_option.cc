// --expect QUANTITY=VALUE[~TOL] (docs/cli.md): the command-line form of an expect
// statement, resolved against an elaborated circuit with the netlist's number literals.
#include <fmt/format.h>

#include <cmath>

#include "knee/netlist.h"
#include "numbers.h"

namespace knee {
namespace {

std::string Trim(std::string_view text) {
  const size_t first = text.find_first_not_of(" \t");
  if (first == std::string_view::npos) return "";
  const size_t last = text.find_last_not_of(" \t");
  return std::string(text.substr(first, last - first + 1));
}

Diagnostic Problem(const SourceLocation& where, std::string message, std::string hint = "") {
  Diagnostic d;
  d.where = where;
  d.message = std::move(message);
  d.hint = std::move(hint);
  return d;
}

// One number literal at a place; "" on success, else the message (and *hint).
std::string Literal(const std::string& text, const ValuePlace& place, double* value,
                    NumberLiteral* literal, std::string* hint) {
  NumberError error;
  if (!ParseNumber(text, literal, &error)) {
    *hint = error.hint;
    return fmt::format("'{}' is not a number: {}", text, error.message);
  }
  std::string message;
  if (!ApplyPlace(*literal, text, place, value, &message, hint)) return message;
  if (!std::isfinite(*value)) return fmt::format("'{}' is not a finite number", text);
  return "";
}

}  // namespace

Result<Expectation> ParseExpectOption(std::string_view text, const Circuit& circuit,
                                      const SourceLocation& where, const ParamValues* params) {
  const std::string whole(text);
  const char* form = "write QUANTITY=VALUE[~TOL], e.g. --expect pin.v=3.9~50m";
  // The '=' outside parentheses separates the quantity from the value.
  size_t eq = std::string::npos;
  int depth = 0;
  for (size_t i = 0; i < whole.size() && eq == std::string::npos; ++i) {
    if (whole[i] == '(') ++depth;
    if (whole[i] == ')' && depth > 0) --depth;
    if (whole[i] == '=' && depth == 0) eq = i;
  }
  if (eq == std::string::npos) {
    return Problem(where, fmt::format("'{}' has no '=' between a quantity and a value", whole),
                   form);
  }
  const std::string quantity_text = Trim(whole.substr(0, eq));
  std::string value_text = Trim(whole.substr(eq + 1));
  std::string tol_text;
  const size_t tilde = value_text.find('~');
  if (tilde != std::string::npos) {
    tol_text = Trim(value_text.substr(tilde + 1));
    value_text = Trim(value_text.substr(0, tilde));
    if (tol_text.empty()) {
      return Problem(where, fmt::format("'{}': nothing after '~'; expected a tolerance", whole),
                     "an absolute tolerance like ~50m or a relative one like ~5%");
    }
  }
  if (quantity_text.empty() || value_text.empty()) {
    return Problem(
        where, fmt::format("'{}' lacks a {}", whole, quantity_text.empty() ? "quantity" : "value"),
        form);
  }
  Result<QuantityExpr> quantity = ParseQuantity(quantity_text, circuit, where, params);
  if (!quantity) return std::move(quantity).take_errors();

  const std::string& unit = quantity->unit();
  const std::string place_unit = unit.empty() ? "*" : unit;
  Expectation e{std::move(quantity).value(),   0,           0.05, true, where,
                Expectation::Relation::kEqual, std::nullopt};
  std::string hint;
  NumberLiteral literal;
  std::string problem = Literal(value_text, ValuePlace{"the expected value", place_unit},
                                &e.expected, &literal, &hint);
  if (!problem.empty()) {
    return Problem(where, fmt::format("'{}': {}", whole, problem), hint);
  }
  if (!tol_text.empty()) {
    double tol = 0;
    // A % tolerance is relative whatever the quantity's unit; any other is absolute.
    const bool percent = !tol_text.empty() && tol_text.back() == '%';
    problem = Literal(tol_text, ValuePlace{"a tolerance", percent ? "" : place_unit}, &tol,
                      &literal, &hint);
    if (!problem.empty()) return Problem(where, fmt::format("'{}': {}", whole, problem), hint);
    e.relative = literal.unit == "%";
    e.tolerance = tol;
    if (!(tol > 0)) {
      return Problem(where, fmt::format("'{}': tolerance {} must be > 0", whole, tol_text));
    }
  }
  return e;
}

Result<double> ParseNumberText(std::string_view text, std::string_view unit, std::string_view what,
                               const SourceLocation& where) {
  const std::string trimmed = Trim(text);
  double value = 0;
  NumberLiteral literal;
  std::string hint;
  const std::string problem = Literal(trimmed, ValuePlace{what, unit}, &value, &literal, &hint);
  if (!problem.empty()) return Problem(where, problem, hint);
  return value;
}

}  // namespace knee
