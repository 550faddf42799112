// Expressions (netlist-format.md, "Expressions"): parsing from the scanner's expression
// tokens, and evaluation with a caller-supplied meaning for names.
#pragma once

#include <functional>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "knee/result.h"
#include "lexer.h"
#include "syntax.h"

namespace knee {

// Deepest expression tree accepted (each parenthesis, unary sign, function call or
// operator in a chain adds a level); deeper input is an error, never a stack overflow.
inline constexpr int kMaxExprDepth = 200;

Diagnostic MakeError(const std::string& file, const Span& span, std::string message,
                     std::string hint = "");

class ExprParser {
 public:
  // `file` names the text in diagnostics; errors are appended to *errors.
  ExprParser(Scanner* scanner, const std::string& file, std::vector<Diagnostic>* errors)
      : scanner_(scanner), file_(file), errors_(errors) {}
  // An expression up to the first token that cannot continue it; nullptr on error.
  std::unique_ptr<Expr> ParseExpression();
  // The rest of an expression after `open` ('(' already consumed), through its ')'.
  std::unique_ptr<Expr> ParseParenthesized(const Token& open);

 private:
  std::unique_ptr<Expr> ParseSum();
  std::unique_ptr<Expr> ParseProduct();
  std::unique_ptr<Expr> ParseUnary();
  std::unique_ptr<Expr> ParsePower();
  std::unique_ptr<Expr> ParsePrimary();
  std::unique_ptr<Expr> ParseCall(const Token& name);
  std::unique_ptr<Expr> Binary(Expr::Kind kind, const Token& op, std::unique_ptr<Expr> left,
                               std::unique_ptr<Expr> right);
  bool Fail(const Span& span, std::string message, std::string hint = "");
  bool TooDeep(const Span& span);

  Scanner* scanner_;
  const std::string& file_;
  std::vector<Diagnostic>* errors_;
  int depth_ = 0;
  bool failed_ = false;
};

// The functions and constants that expressions know.
bool IsFunctionName(std::string_view name);
std::optional<double> ConstantValue(std::string_view name);
std::vector<std::string> FunctionAndConstantNames();

// The meaning of a name during evaluation: its value, or an error.
using NameLookup = std::function<Result<double>(const Expr& name_node)>;

// Evaluates `expr`; domain errors (division by zero, ln of a non-positive number,
// non-finite results) are errors at the offending operator or function.
Result<double> EvaluateExpr(const Expr& expr, const NameLookup& lookup, const std::string& file);

// A value at a value place, in word mode: a number literal, a param name or a
// parenthesised expression. Errors are appended to *errors; `what` names the place.
bool ParseValue(Scanner* scanner, const std::string& file, const std::string& what, Value* value,
                std::vector<Diagnostic>* errors);

// Every kName leaf of `expr` that is not a constant, in order of appearance.
void CollectNames(const Expr& expr, std::vector<const Expr*>* names);

// Forward-mode differentiation of expressions: a value and its slope along one
// direction. Shared by the params' reach into the circuit (instantiate.cc) and the
// partials of quantity expressions (quantity_parser.cc), whose trees differ.
struct Dual {
  double value = 0.0;
  double slope = 0.0;
};
// The operator `kind` (kNegate ... kPow; kCall with `function`: exp, ln, log10, sqrt,
// abs, min, max, pow) on `args`. Where a function has no derivative (abs at 0, min/max
// at a tie) the slope is that of the branch its value takes (the first argument of a
// tie); outside a function's domain both value and slope are NaN.
Dual ApplyDual(Expr::Kind kind, std::string_view function, std::span<const Dual> args);
// `expr` with names' values and slopes from `lookup` (constants have slope 0); NaN
// where evaluation would fail.
Dual EvaluateDual(const Expr& expr, const std::function<Dual(const Expr& name_node)>& lookup);

}  // namespace knee
