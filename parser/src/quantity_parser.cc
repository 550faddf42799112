// ParseQuantity: NODE.v, ELEMENT.v/.i/.p, DIODE.vj/.rd and (EXPR) of those.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <optional>

#include "expr.h"
#include "knee/diagnostics.h"
#include "knee/netlist.h"
#include "lexer.h"

namespace knee {

struct QuantityExpr::Node {
  enum class Kind { kNumber, kRef, kVariable, kNegate, kAdd, kSub, kMul, kDiv, kPow, kCall };
  Kind kind = Kind::kNumber;
  double number = 0;
  QuantityRef ref;
  int variable = -1;  // kVariable: index into QuantityExpr::variables()
  std::string function;
  std::vector<std::shared_ptr<const Node>> args;
};

namespace {

using Node = QuantityExpr::Node;

void CollectRefs(const Node& node, std::vector<QuantityRef>* refs) {
  if (node.kind == Node::Kind::kRef) {
    const bool seen = std::any_of(refs->begin(), refs->end(), [&](const QuantityRef& r) {
      return r.kind == node.ref.kind && r.index == node.ref.index;
    });
    if (!seen) refs->push_back(node.ref);
  }
  for (const auto& arg : node.args) CollectRefs(*arg, refs);
}

double EvaluateNode(const Node& node, const Solution& solution,
                    const std::vector<double>& variables) {
  std::vector<double> v;
  v.reserve(node.args.size());
  for (const auto& arg : node.args) v.push_back(EvaluateNode(*arg, solution, variables));
  switch (node.kind) {
    case Node::Kind::kNumber:
      return node.number;
    case Node::Kind::kRef:
      return Evaluate(solution, node.ref);
    case Node::Kind::kVariable:
      return variables[static_cast<std::size_t>(node.variable)];
    case Node::Kind::kNegate:
      return -v[0];
    case Node::Kind::kAdd:
      return v[0] + v[1];
    case Node::Kind::kSub:
      return v[0] - v[1];
    case Node::Kind::kMul:
      return v[0] * v[1];
    case Node::Kind::kDiv:
      return v[1] == 0 ? std::nan("") : v[0] / v[1];
    case Node::Kind::kPow:
      return std::pow(v[0], v[1]);
    case Node::Kind::kCall:
      break;
  }
  const std::string& f = node.function;
  if (f == "exp") return std::exp(v[0]);
  if (f == "ln") return v[0] > 0 ? std::log(v[0]) : std::nan("");
  if (f == "log10") return v[0] > 0 ? std::log10(v[0]) : std::nan("");
  if (f == "sqrt") return v[0] >= 0 ? std::sqrt(v[0]) : std::nan("");
  if (f == "abs") return std::fabs(v[0]);
  if (f == "min") return *std::min_element(v.begin(), v.end());
  if (f == "max") return *std::max_element(v.begin(), v.end());
  if (f == "pow") return std::pow(v[0], v[1]);
  return std::nan("");
}

Expr::Kind ExprKindOf(Node::Kind kind) {
  switch (kind) {
    case Node::Kind::kNumber:
      return Expr::Kind::kNumber;
    case Node::Kind::kRef:
    case Node::Kind::kVariable:
      return Expr::Kind::kName;
    case Node::Kind::kNegate:
      return Expr::Kind::kNegate;
    case Node::Kind::kAdd:
      return Expr::Kind::kAdd;
    case Node::Kind::kSub:
      return Expr::Kind::kSub;
    case Node::Kind::kMul:
      return Expr::Kind::kMul;
    case Node::Kind::kDiv:
      return Expr::Kind::kDiv;
    case Node::Kind::kPow:
      return Expr::Kind::kPow;
    case Node::Kind::kCall:
      return Expr::Kind::kCall;
  }
  return Expr::Kind::kNumber;
}

// The node's value and its slope along the plain quantity `along`.
// A param or temp is a constant of the solution: its nominal value, slope 0.
Dual DualNode(const Node& node, const Solution& solution, const QuantityRef& along,
              const std::vector<double>& variables) {
  if (node.kind == Node::Kind::kNumber) return {node.number, 0.0};
  if (node.kind == Node::Kind::kVariable) {
    return {variables[static_cast<std::size_t>(node.variable)], 0.0};
  }
  if (node.kind == Node::Kind::kRef) {
    const bool same = node.ref.kind == along.kind && node.ref.index == along.index;
    return {Evaluate(solution, node.ref), same ? 1.0 : 0.0};
  }
  std::vector<Dual> args;
  args.reserve(node.args.size());
  for (const auto& arg : node.args) args.push_back(DualNode(*arg, solution, along, variables));
  return ApplyDual(ExprKindOf(node.kind), node.function, args);
}

struct Converted {
  std::shared_ptr<const Node> node;
  std::string unit;
  bool is_number = false;  // a constant, with no quantity in it
};

class QuantityResolver {
 public:
  QuantityResolver(const Circuit& circuit, const std::string& file, const ParamValues* params)
      : circuit_(circuit), file_(file), params_(params) {}

  std::vector<std::string> variables;  // in order of first use
  std::vector<double> nominal;

  Result<Converted> Convert(const Expr& e) {
    auto node = std::make_shared<Node>();
    Converted out;
    switch (e.kind) {
      case Expr::Kind::kNumber:
        node->number = e.number;
        out.is_number = true;
        out.node = node;
        return out;
      case Expr::Kind::kName: {
        if (auto c = ConstantValue(e.name)) {
          node->number = *c;
          out.is_number = true;
          out.node = node;
          return out;
        }
        if (std::optional<double> value = VariableValue(e.name)) {
          // A param or temp is a number to the unit rules (docs/netlist-format.md,
          // "Quantities in expressions").
          node->kind = Node::Kind::kVariable;
          node->variable = VariableIndex(e.name, *value);
          out.is_number = true;
          out.node = node;
          return out;
        }
        Result<QuantityRef> ref = Resolve(e);
        if (!ref.ok()) return std::move(ref).take_errors();
        node->kind = Node::Kind::kRef;
        node->ref = *ref;
        out.unit = UnitSymbol(ref->kind);
        out.node = node;
        return out;
      }
      default:
        break;
    }
    std::vector<Converted> args;
    for (const auto& arg : e.args) {
      Result<Converted> r = Convert(*arg);
      if (!r.ok()) return r;
      node->args.push_back(r->node);
      args.push_back(std::move(*r));
    }
    out.is_number =
        std::all_of(args.begin(), args.end(), [](const Converted& c) { return c.is_number; });
    // Units of sums and differences follow the quantities in them, also when a param or
    // temp stands beside them.
    switch (e.kind) {
      case Expr::Kind::kNegate:
        node->kind = Node::Kind::kNegate;
        out.unit = args[0].unit;
        break;
      case Expr::Kind::kAdd:
      case Expr::Kind::kSub:
        node->kind = e.kind == Expr::Kind::kAdd ? Node::Kind::kAdd : Node::Kind::kSub;
        // A sum keeps a unit shared by its terms; a plain number takes the other's.
        if (args[0].is_number) {
          out.unit = args[1].unit;
        } else if (args[1].is_number || args[0].unit == args[1].unit) {
          out.unit = args[0].unit;
        }
        break;
      case Expr::Kind::kMul:
        node->kind = Node::Kind::kMul;
        break;
      case Expr::Kind::kDiv:
        node->kind = Node::Kind::kDiv;
        break;
      case Expr::Kind::kPow:
        node->kind = Node::Kind::kPow;
        break;
      default:
        node->kind = Node::Kind::kCall;
        node->function = e.name;
        break;
    }
    out.node = node;
    return out;
  }

 private:
  // A param's value, or the circuit's temperature for "temp"; nullopt for other names.
  std::optional<double> VariableValue(const std::string& name) const {
    if (name == "temp") return circuit_.temp;
    if (!params_) return std::nullopt;
    for (const auto& [param, value] : *params_) {
      if (param == name) return value;
    }
    return std::nullopt;
  }
  int VariableIndex(const std::string& name, double value) {
    for (std::size_t i = 0; i < variables.size(); ++i) {
      if (variables[i] == name) return static_cast<int>(i);
    }
    variables.push_back(name);
    nominal.push_back(value);
    return static_cast<int>(variables.size()) - 1;
  }

  // The hint for a bare name that is neither a param nor temp: NAME.v for a node, NAME.i
  // for an element, else the nearest param (or temp) by spelling.
  std::string BareNameHint(const std::string& name) const {
    if (circuit_.FindNode(name) >= 0) return fmt::format("did you mean '{}.v'?", name);
    if (circuit_.FindElement(name) >= 0) return fmt::format("did you mean '{}.i'?", name);
    std::vector<std::string> names = {"temp"};
    if (params_) {
      for (const auto& entry : *params_) names.push_back(entry.first);
    }
    const std::string near = SuggestName(name, names);
    return near.empty() ? "" : fmt::format("did you mean '{}'?", near);
  }

  Result<QuantityRef> Resolve(const Expr& e) {
    const std::string& text = e.name;
    const std::size_t dot = text.find('.');
    if (dot == std::string::npos) {
      return MakeError(file_, e.span,
                       fmt::format("'{}' is not a quantity, a param or temp; expected NODE.v, "
                                   "ELEMENT.v, ELEMENT.i, ELEMENT.p, DIODE.vj, DIODE.rd, "
                                   "DIODE.tj or HEATSINK.t",
                                   text),
                       BareNameHint(text));
    }
    const std::string name = text.substr(0, dot);
    const std::string field = text.substr(dot + 1);
    const int node = circuit_.FindNode(name);
    if (node >= 0) {
      if (field == "v") return QuantityRef{QuantityKind::kNodeVoltage, node};
      return MakeError(file_, e.span,
                       fmt::format("'{}' is a node; a node has only .v (its voltage)", name),
                       fmt::format("did you mean '{}.v'?", name));
    }
    const int sink = circuit_.FindHeatsink(name);
    if (sink >= 0) {
      if (field == "t") return QuantityRef{QuantityKind::kSinkTemp, sink};
      return MakeError(
          file_, e.span,
          fmt::format("'{}' is a heatsink; a heatsink has only .t (its temperature)", name),
          fmt::format("did you mean '{}.t'?", name));
    }
    const int element = circuit_.FindElement(name);
    if (element < 0) {
      std::vector<std::string> names = circuit_.NodeNames();
      for (const Element& el : circuit_.elements) names.push_back(el.name);
      for (const Heatsink& h : circuit_.heatsinks) names.push_back(h.name);
      const std::string near = SuggestName(name, names);
      return MakeError(file_, e.span,
                       fmt::format("unknown node or element '{}' in the quantity '{}'", name, text),
                       near.empty() ? "" : fmt::format("did you mean '{}'?", near));
    }
    const Element& el = circuit_.elements[static_cast<std::size_t>(element)];
    const bool diode = el.kind == ElementKind::kDiode;
    if (field == "v") return QuantityRef{QuantityKind::kElementVoltage, element};
    if (field == "i") return QuantityRef{QuantityKind::kElementCurrent, element};
    if (field == "p") return QuantityRef{QuantityKind::kElementPower, element};
    if (diode && field == "vj") return QuantityRef{QuantityKind::kJunctionVoltage, element};
    if (diode && field == "rd") return QuantityRef{QuantityKind::kSmallSignalRes, element};
    if (diode && field == "tj") return QuantityRef{QuantityKind::kJunctionTemp, element};
    if (field == "vj" || field == "rd" || field == "tj") {
      return MakeError(file_, e.span,
                       fmt::format("'{}' is a {}; .vj, .rd and .tj exist for diodes only", name,
                                   ElementKindName(el.kind)));
    }
    std::vector<std::string> fields = {"v", "i", "p"};
    if (diode) fields.insert(fields.end(), {"vj", "rd", "tj"});
    const std::string near = SuggestName(field, fields);
    return MakeError(file_, e.span,
                     fmt::format("unknown quantity '.{}' of {} '{}'; expected .v, .i, .p{}", field,
                                 ElementKindName(el.kind), name, diode ? ", .vj, .rd or .tj" : ""),
                     near.empty() ? "" : fmt::format("did you mean '{}.{}'?", name, near));
  }

  const Circuit& circuit_;
  const std::string& file_;
  const ParamValues* params_;
};

}  // namespace

QuantityExpr::QuantityExpr(std::string text, std::string unit, std::shared_ptr<const Node> root,
                           std::vector<std::string> variables, std::vector<double> nominal)
    : text_(std::move(text)),
      unit_(std::move(unit)),
      root_(std::move(root)),
      variables_(std::move(variables)),
      nominal_(std::move(nominal)) {
  if (root_) CollectRefs(*root_, &refs_);
}

double QuantityExpr::Evaluate(const Solution& solution) const {
  return root_ ? EvaluateNode(*root_, solution, nominal_) : std::nan("");
}

double QuantityExpr::Evaluate(const Solution& solution, const std::vector<double>& values) const {
  return root_ ? EvaluateNode(*root_, solution, values) : std::nan("");
}

std::vector<double> QuantityExpr::Partials(const Solution& solution) const {
  std::vector<double> partials;
  partials.reserve(refs_.size());
  for (const QuantityRef& ref : refs_) {
    partials.push_back(root_ ? DualNode(*root_, solution, ref, nominal_).slope : std::nan(""));
  }
  return partials;
}

QuantityExpr PlainQuantity(const Circuit& circuit, const QuantityRef& ref) {
  auto node = std::make_shared<Node>();
  node->kind = Node::Kind::kRef;
  node->ref = ref;
  return QuantityExpr(QuantityName(circuit, ref), UnitSymbol(ref.kind), std::move(node));
}

Result<QuantityExpr> ParseQuantity(std::string_view text, const Circuit& circuit,
                                   const SourceLocation& where, const ParamValues* params) {
  const std::string& file = where.file;
  // Trim blanks so that columns still count from `where`.
  std::size_t begin = 0, end = text.size();
  while (begin < end && (text[begin] == ' ' || text[begin] == '\t')) ++begin;
  while (end > begin && (text[end - 1] == ' ' || text[end - 1] == '\t')) --end;
  Span base = ToSpan(where);
  if (base.line > 0) base.column += CountChars(text.substr(0, begin));
  const std::string_view trimmed = text.substr(begin, end - begin);
  const LogicalLine line = SyntheticLine(trimmed, base);
  Scanner scanner(line);
  std::vector<Diagnostic> errors;
  if (trimmed.empty()) {
    return MakeError(file, base, "expected a quantity (such as pin.v or R1.i) but found nothing");
  }
  ExprParser parser(&scanner, file, &errors);
  std::unique_ptr<Expr> expr;
  const Token first = scanner.PeekExpr();
  if (first.kind == Tok::kLParen) {
    scanner.NextExpr();
    expr = parser.ParseParenthesized(first);
  } else {
    expr = parser.ParseExpression();
    if (expr && expr->kind != Expr::Kind::kName) {
      return MakeError(file, scanner.SpanOf(0, trimmed.size()),
                       "an expression of quantities must be written in parentheses",
                       fmt::format("write ({})", trimmed));
    }
  }
  if (!expr) return errors;
  const Token rest = scanner.NextExpr();
  if (rest.kind != Tok::kEnd) {
    return MakeError(file, scanner.SpanOf(rest),
                     fmt::format("unexpected '{}' after the quantity", rest.text));
  }
  QuantityResolver resolver(circuit, file, params);
  Result<Converted> converted = resolver.Convert(*expr);
  if (!converted.ok()) return std::move(converted).take_errors();
  return QuantityExpr(std::string(trimmed), converted->unit, converted->node,
                      std::move(resolver.variables), std::move(resolver.nominal));
}

}  // namespace knee
