#include "expr.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "knee/diagnostics.h"
#include "knee/diode_law.h"
#include "numbers.h"

namespace knee {
namespace {

struct FunctionInfo {
  const char* name;
  int min_args;
  int max_args;  // -1: any number >= min_args
};
constexpr FunctionInfo kFunctions[] = {
    {"exp", 1, 1}, {"ln", 1, 1},   {"log10", 1, 1}, {"sqrt", 1, 1},
    {"abs", 1, 1}, {"min", 2, -1}, {"max", 2, -1},  {"pow", 2, 2},
};

const FunctionInfo* FindFunction(std::string_view name) {
  for (const FunctionInfo& f : kFunctions) {
    if (name == f.name) return &f;
  }
  return nullptr;
}

std::string ArgumentCount(const FunctionInfo& f) {
  if (f.max_args < 0) return fmt::format("at least {} arguments", f.min_args);
  if (f.min_args == 1) return "1 argument";
  return fmt::format("{} arguments", f.min_args);
}

std::string Describe(const Token& t) {
  if (t.kind == Tok::kEnd) return "the end of the line";
  return fmt::format("'{}'", t.text);
}

}  // namespace

Diagnostic MakeError(const std::string& file, const Span& span, std::string message,
                     std::string hint) {
  Diagnostic d;
  d.where = ToLocation(file, span);
  d.message = std::move(message);
  d.hint = std::move(hint);
  return d;
}

bool IsFunctionName(std::string_view name) { return FindFunction(name) != nullptr; }

std::optional<double> ConstantValue(std::string_view name) {
  if (name == "pi") return std::numbers::pi;
  if (name == "k_boltzmann") return kBoltzmann;        // CODATA 2018, exact (J/K)
  if (name == "q_electron") return kElementaryCharge;  // CODATA 2018, exact (C)
  return std::nullopt;
}

std::vector<std::string> FunctionAndConstantNames() {
  std::vector<std::string> names;
  for (const FunctionInfo& f : kFunctions) names.emplace_back(f.name);
  names.insert(names.end(), {"pi", "k_boltzmann", "q_electron"});
  return names;
}

bool ExprParser::Fail(const Span& span, std::string message, std::string hint) {
  if (!failed_) errors_->push_back(MakeError(file_, span, std::move(message), std::move(hint)));
  failed_ = true;
  return false;
}

bool ExprParser::TooDeep(const Span& span) {
  return !Fail(span,
               fmt::format("expression nested too deeply; the limit is {} levels", kMaxExprDepth));
}

std::unique_ptr<Expr> ExprParser::ParseExpression() {
  failed_ = false;
  depth_ = 0;
  auto e = ParseSum();
  if (failed_) return nullptr;
  return e;
}

std::unique_ptr<Expr> ExprParser::ParseParenthesized(const Token& open) {
  failed_ = false;
  depth_ = 1;
  auto inner = ParseSum();
  if (failed_) return nullptr;
  const Token close = scanner_->NextExpr();
  if (close.kind != Tok::kRParen) {
    if (close.kind == Tok::kEnd) {
      Fail(scanner_->SpanOf(open), "unclosed '('; expected ')' before the end of the line");
    } else if (close.kind == Tok::kError) {
      Fail(scanner_->SpanOf(close), close.error);
    } else {
      Fail(scanner_->SpanOf(close),
           fmt::format("expected an operator or ')' but found {}", Describe(close)));
    }
    return nullptr;
  }
  return inner;
}

std::unique_ptr<Expr> ExprParser::Binary(Expr::Kind kind, const Token& op,
                                         std::unique_ptr<Expr> left, std::unique_ptr<Expr> right) {
  auto node = std::make_unique<Expr>();
  node->kind = kind;
  node->span = scanner_->SpanOf(op);
  node->height = std::max(left->height, right->height) + 1;
  node->args.push_back(std::move(left));
  node->args.push_back(std::move(right));
  if (node->height > kMaxExprDepth) {
    TooDeep(node->span);
    return nullptr;
  }
  return node;
}

std::unique_ptr<Expr> ExprParser::ParseSum() {
  auto left = ParseProduct();
  while (left) {
    const Token op = scanner_->PeekExpr();
    if (op.kind != Tok::kOp || (op.text != "+" && op.text != "-")) break;
    scanner_->NextExpr();
    auto right = ParseProduct();
    if (!right) return nullptr;
    left = Binary(op.text == "+" ? Expr::Kind::kAdd : Expr::Kind::kSub, op, std::move(left),
                  std::move(right));
  }
  return left;
}

std::unique_ptr<Expr> ExprParser::ParseProduct() {
  auto left = ParseUnary();
  while (left) {
    const Token op = scanner_->PeekExpr();
    if (op.kind != Tok::kOp || (op.text != "*" && op.text != "/")) break;
    scanner_->NextExpr();
    auto right = ParseUnary();
    if (!right) return nullptr;
    left = Binary(op.text == "*" ? Expr::Kind::kMul : Expr::Kind::kDiv, op, std::move(left),
                  std::move(right));
  }
  return left;
}

// Unary signs bind looser than '^': -2^2 = -(2^2), as in mathematics.
std::unique_ptr<Expr> ExprParser::ParseUnary() {
  const Token op = scanner_->PeekExpr();
  if (op.kind == Tok::kOp && (op.text == "-" || op.text == "+")) {
    scanner_->NextExpr();
    if (++depth_ > kMaxExprDepth) {
      TooDeep(scanner_->SpanOf(op));
      return nullptr;
    }
    auto operand = ParseUnary();
    --depth_;
    if (!operand || op.text == "+") return operand;
    auto node = std::make_unique<Expr>();
    node->kind = Expr::Kind::kNegate;
    node->span = scanner_->SpanOf(op);
    node->height = operand->height + 1;
    node->args.push_back(std::move(operand));
    if (node->height > kMaxExprDepth) {
      TooDeep(node->span);
      return nullptr;
    }
    return node;
  }
  return ParsePower();
}

// '^' is right-associative: 2^3^2 = 2^(3^2); its exponent may carry a sign: 2^-1.
std::unique_ptr<Expr> ExprParser::ParsePower() {
  auto base = ParsePrimary();
  if (!base) return nullptr;
  const Token op = scanner_->PeekExpr();
  if (op.kind != Tok::kOp || op.text != "^") return base;
  scanner_->NextExpr();
  if (++depth_ > kMaxExprDepth) {
    TooDeep(scanner_->SpanOf(op));
    return nullptr;
  }
  auto exponent = ParseUnary();
  --depth_;
  if (!exponent) return nullptr;
  return Binary(Expr::Kind::kPow, op, std::move(base), std::move(exponent));
}

std::unique_ptr<Expr> ExprParser::ParsePrimary() {
  const Token t = scanner_->NextExpr();
  switch (t.kind) {
    case Tok::kNumber: {
      NumberLiteral literal;
      NumberError error;
      if (!ParseNumber(t.text, &literal, &error)) {
        Span span = scanner_->SpanOf(t.begin + error.offset, t.begin + error.offset + error.length);
        Fail(span, error.message, error.hint);
        return nullptr;
      }
      if (literal.unit == "K" || literal.unit == "C") {
        Span span = scanner_->SpanOf(t.begin + literal.unit_offset, t.end);
        if (literal.unit == "K") {
          Fail(span,
               "unit 'K' is not allowed inside an expression (no kelvin conversion happens "
               "there)",
               t.text.back() == 'K' ? fmt::format("did you mean {}k (kilo)? K is kelvin",
                                                  t.text.substr(0, t.text.size() - 1))
                                    : "");
        } else {
          Fail(span,
               "unit 'C' is not allowed inside an expression; temperatures there are plain "
               "numbers in degrees Celsius");
        }
        return nullptr;
      }
      auto node = std::make_unique<Expr>();
      node->kind = Expr::Kind::kNumber;
      node->number = literal.value;
      node->unit = literal.unit;
      node->span = scanner_->SpanOf(t);
      return node;
    }
    case Tok::kName: {
      if (t.text.size() > kMaxNameLength) {
        Fail(scanner_->SpanOf(t), fmt::format("name is too long ({} characters); the limit is {}",
                                              t.text.size(), kMaxNameLength));
        return nullptr;
      }
      if (scanner_->PeekExpr().kind == Tok::kLParen) return ParseCall(t);
      if (IsFunctionName(t.text)) {
        Fail(scanner_->SpanOf(t),
             fmt::format("function '{}' needs its arguments in parentheses, e.g. {}(1)", t.text,
                         t.text));
        return nullptr;
      }
      auto node = std::make_unique<Expr>();
      node->kind = Expr::Kind::kName;
      node->name = std::string(t.text);
      node->span = scanner_->SpanOf(t);
      return node;
    }
    case Tok::kLParen: {
      if (++depth_ > kMaxExprDepth) {
        TooDeep(scanner_->SpanOf(t));
        return nullptr;
      }
      auto inner = ParseSum();
      --depth_;
      if (!inner) return nullptr;
      const Token close = scanner_->NextExpr();
      if (close.kind == Tok::kRParen) {
        if (++inner->height > kMaxExprDepth) {
          TooDeep(scanner_->SpanOf(t));
          return nullptr;
        }
        return inner;
      }
      if (close.kind == Tok::kEnd) {
        Fail(scanner_->SpanOf(t), "unclosed '('; expected ')' before the end of the line");
      } else if (close.kind == Tok::kError) {
        Fail(scanner_->SpanOf(close), close.error);
      } else {
        Fail(scanner_->SpanOf(close),
             fmt::format("expected an operator or ')' but found {}", Describe(close)));
      }
      return nullptr;
    }
    case Tok::kError:
      Fail(scanner_->SpanOf(t), t.error);
      return nullptr;
    default:
      Fail(scanner_->SpanOf(t),
           fmt::format("expected a number, a name or '(' but found {}", Describe(t)));
      return nullptr;
  }
}

std::unique_ptr<Expr> ExprParser::ParseCall(const Token& name) {
  const FunctionInfo* f = FindFunction(name.text);
  if (!f) {
    std::vector<std::string> names;
    for (const FunctionInfo& g : kFunctions) names.emplace_back(g.name);
    std::string hint;
    std::string near = SuggestName(name.text, names);
    if (!near.empty()) hint = fmt::format("did you mean '{}'?", near);
    Fail(scanner_->SpanOf(name),
         fmt::format("unknown function '{}'; expected one of exp, ln, log10, sqrt, abs, min, "
                     "max, pow",
                     name.text),
         hint);
    return nullptr;
  }
  const Token open = scanner_->NextExpr();
  if (++depth_ > kMaxExprDepth) {
    TooDeep(scanner_->SpanOf(open));
    return nullptr;
  }
  auto node = std::make_unique<Expr>();
  node->kind = Expr::Kind::kCall;
  node->name = std::string(name.text);
  node->span = scanner_->SpanOf(name);
  int height = 1;
  if (scanner_->PeekExpr().kind != Tok::kRParen) {
    while (true) {
      auto arg = ParseSum();
      if (!arg) return nullptr;
      height = std::max(height, arg->height + 1);
      node->args.push_back(std::move(arg));
      const Token sep = scanner_->NextExpr();
      if (sep.kind == Tok::kRParen) break;
      if (sep.kind == Tok::kOp && sep.text == ",") continue;
      if (sep.kind == Tok::kEnd) {
        Fail(scanner_->SpanOf(open), "unclosed '('; expected ')' before the end of the line");
      } else if (sep.kind == Tok::kError) {
        Fail(scanner_->SpanOf(sep), sep.error);
      } else {
        Fail(scanner_->SpanOf(sep),
             fmt::format("expected ',' or ')' in the arguments of '{}' but found {}", name.text,
                         Describe(sep)));
      }
      return nullptr;
    }
  } else {
    scanner_->NextExpr();
  }
  --depth_;
  const int count = static_cast<int>(node->args.size());
  if (count < f->min_args || (f->max_args >= 0 && count > f->max_args)) {
    Fail(node->span,
         fmt::format("function '{}' takes {}, found {}", f->name, ArgumentCount(*f), count));
    return nullptr;
  }
  node->height = height;
  if (node->height > kMaxExprDepth) {
    TooDeep(node->span);
    return nullptr;
  }
  return node;
}

namespace {

Result<double> Finite(double value, const std::string& file, const Span& span,
                      const std::string& what) {
  if (std::isfinite(value)) return value;
  return MakeError(file, span, fmt::format("{} is not a finite number", what));
}

}  // namespace

Result<double> EvaluateExpr(const Expr& expr, const NameLookup& lookup, const std::string& file) {
  switch (expr.kind) {
    case Expr::Kind::kNumber:
      return expr.number;
    case Expr::Kind::kName: {
      if (auto c = ConstantValue(expr.name)) return *c;
      return lookup(expr);
    }
    default:
      break;
  }
  std::vector<double> v;
  v.reserve(expr.args.size());
  for (const auto& arg : expr.args) {
    Result<double> r = EvaluateExpr(*arg, lookup, file);
    if (!r.ok()) return r;
    v.push_back(*r);
  }
  const Span& at = expr.span;
  switch (expr.kind) {
    case Expr::Kind::kNegate:
      return -v[0];
    case Expr::Kind::kAdd:
      return Finite(v[0] + v[1], file, at, fmt::format("the sum {} + {}", v[0], v[1]));
    case Expr::Kind::kSub:
      return Finite(v[0] - v[1], file, at, fmt::format("the difference {} - {}", v[0], v[1]));
    case Expr::Kind::kMul:
      return Finite(v[0] * v[1], file, at, fmt::format("the product {} * {}", v[0], v[1]));
    case Expr::Kind::kDiv:
      if (v[1] == 0) return MakeError(file, at, fmt::format("division by zero ({} / 0)", v[0]));
      return Finite(v[0] / v[1], file, at, fmt::format("the quotient {} / {}", v[0], v[1]));
    case Expr::Kind::kPow:
      return Finite(std::pow(v[0], v[1]), file, at, fmt::format("{} ^ {}", v[0], v[1]));
    case Expr::Kind::kCall:
      break;
    default:
      return MakeError(file, at, "internal error: unknown expression node");
  }
  const std::string& f = expr.name;
  if (f == "exp") return Finite(std::exp(v[0]), file, at, fmt::format("exp({})", v[0]));
  if (f == "ln" || f == "log10") {
    if (v[0] <= 0) {
      return MakeError(file, at, fmt::format("{} of a number that is not positive ({})", f, v[0]));
    }
    return f == "ln" ? std::log(v[0]) : std::log10(v[0]);
  }
  if (f == "sqrt") {
    if (v[0] < 0) return MakeError(file, at, fmt::format("sqrt of a negative number ({})", v[0]));
    return std::sqrt(v[0]);
  }
  if (f == "abs") return std::fabs(v[0]);
  if (f == "min") return *std::min_element(v.begin(), v.end());
  if (f == "max") return *std::max_element(v.begin(), v.end());
  if (f == "pow")
    return Finite(std::pow(v[0], v[1]), file, at, fmt::format("pow({}, {})", v[0], v[1]));
  return MakeError(file, at, fmt::format("internal error: unknown function '{}'", f));
}

void CollectNames(const Expr& expr, std::vector<const Expr*>* names) {
  if (expr.kind == Expr::Kind::kName) {
    if (!ConstantValue(expr.name)) names->push_back(&expr);
    return;
  }
  for (const auto& arg : expr.args) CollectNames(*arg, names);
}

Dual ApplyDual(Expr::Kind kind, std::string_view f, std::span<const Dual> a) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const auto pow_dual = [&](const Dual& x, const Dual& y) {
    const double value = std::pow(x.value, y.value);
    // d(x^y) = y x^(y-1) dx + x^y ln(x) dy; the second term only where y moves.
    double slope = x.slope == 0.0 ? 0.0 : y.value * std::pow(x.value, y.value - 1.0) * x.slope;
    if (y.slope != 0.0) slope += value * std::log(x.value) * y.slope;
    return Dual{value, slope};
  };
  switch (kind) {
    case Expr::Kind::kNumber:
    case Expr::Kind::kName:
      return a.empty() ? Dual{nan, nan} : a[0];
    case Expr::Kind::kNegate:
      return {-a[0].value, -a[0].slope};
    case Expr::Kind::kAdd:
      return {a[0].value + a[1].value, a[0].slope + a[1].slope};
    case Expr::Kind::kSub:
      return {a[0].value - a[1].value, a[0].slope - a[1].slope};
    case Expr::Kind::kMul:
      return {a[0].value * a[1].value, a[0].slope * a[1].value + a[0].value * a[1].slope};
    case Expr::Kind::kDiv: {
      if (a[1].value == 0.0) return {nan, nan};
      const double q = a[0].value / a[1].value;
      return {q, (a[0].slope - q * a[1].slope) / a[1].value};
    }
    case Expr::Kind::kPow:
      return pow_dual(a[0], a[1]);
    case Expr::Kind::kCall:
      break;
  }
  if (f == "exp") {
    const double e = std::exp(a[0].value);
    return {e, e * a[0].slope};
  }
  if (f == "ln" || f == "log10") {
    if (!(a[0].value > 0.0)) return {nan, nan};
    const double scale = f == "ln" ? 1.0 : 1.0 / std::log(10.0);
    return {std::log(a[0].value) * scale, a[0].slope / a[0].value * scale};
  }
  if (f == "sqrt") {
    if (!(a[0].value >= 0.0)) return {nan, nan};
    const double r = std::sqrt(a[0].value);
    return {r, a[0].slope / (2.0 * r)};
  }
  if (f == "abs") return {std::fabs(a[0].value), a[0].value < 0.0 ? -a[0].slope : a[0].slope};
  if (f == "min" || f == "max") {
    size_t best = 0;
    for (size_t k = 1; k < a.size(); ++k) {
      if (f == "min" ? a[k].value < a[best].value : a[k].value > a[best].value) best = k;
    }
    return a[best];
  }
  if (f == "pow") return pow_dual(a[0], a[1]);
  return {nan, nan};
}

Dual EvaluateDual(const Expr& expr, const std::function<Dual(const Expr& name_node)>& lookup) {
  switch (expr.kind) {
    case Expr::Kind::kNumber:
      return {expr.number, 0.0};
    case Expr::Kind::kName:
      if (auto c = ConstantValue(expr.name)) return {*c, 0.0};
      return lookup(expr);
    default:
      break;
  }
  std::vector<Dual> args;
  args.reserve(expr.args.size());
  for (const auto& arg : expr.args) args.push_back(EvaluateDual(*arg, lookup));
  return ApplyDual(expr.kind, expr.name, args);
}

}  // namespace knee
