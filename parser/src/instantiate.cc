// Elaborate: from parsed statements to a Circuit with every value a number, every name
// resolved, and the requests (bias, sweep, show, expect) resolved against it.
#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstdint>
#include <deque>
#include <map>
#include <string_view>
#include <unordered_map>
#include <utility>

#include "expr.h"
#include "file_order.h"
#include "knee/diagnostics.h"
#include "knee/diode_law.h"
#include "knee/netlist.h"
#include "lexer.h"
#include "name_table.h"
#include "numbers.h"
#include "part_fit.h"
#include "part_keys.h"
#include "ranges.h"
#include "syntax.h"
#include "vary.h"

namespace knee {
namespace {

// Names that a netlist may not define: the reference node, the temp target, and the
// functions and constants of expressions.
bool IsReserved(std::string_view name) {
  if (name == "gnd" || name == "temp") return true;
  if (IsFunctionName(name) || ConstantValue(name)) return true;
  return false;
}

enum class DefKind : std::uint8_t { kParam, kPart, kElement, kNode, kHeatsink };

// 12 bytes: a million-stage netlist defines three million names. Where a name appears
// first is not stored: it is the name's place in its statement (SpanOf), for a node the
// place of that terminal in the first element statement that names it.
struct Definition {
  DefKind kind = DefKind::kNode;
  std::uint8_t terminal = 0;  // kNode: 0 for node_a, 1 for node_b of `statement`
  int index = -1;             // into params / parts / elements / heatsinks / circuit nodes
  int statement = -1;         // kNode: the element statement where the node appears first
};

Span SpanOf(const NetlistData& d, const Definition& def) {
  const auto i = static_cast<std::size_t>(def.index);
  switch (def.kind) {
    case DefKind::kParam:
      return d.params[i].name_span;
    case DefKind::kPart:
      return d.parts[i].name_span;
    case DefKind::kElement:
      return d.elements[i].name_span();
    case DefKind::kHeatsink:
      return d.heatsinks[i].name_span;
    case DefKind::kNode: {
      const ElementStmt& e = d.elements[static_cast<std::size_t>(def.statement)];
      return def.terminal == 0 ? e.a_span() : e.b_span();
    }
  }
  return Span{};
}

// The one namespace of elements, nodes, parts and params.
using Names = NameTable<Definition>;
static_assert(sizeof(Names::Entry) == 24, "a name table entry is 24 bytes");

std::string KindWord(const NetlistData& d, const Definition& def) {
  switch (def.kind) {
    case DefKind::kParam:
      return "param";
    case DefKind::kPart:
      return "part";
    case DefKind::kNode:
      return "node";
    case DefKind::kHeatsink:
      return "heatsink";
    case DefKind::kElement:
      return ElementKindName(d.elements[static_cast<std::size_t>(def.index)].kind);
  }
  return "name";
}

ValuePlace ElementPlace(ElementKind kind) {
  switch (kind) {
    case ElementKind::kResistor:
      return {"a resistor value", "Ohm"};
    case ElementKind::kVoltageSource:
      return {"a vsource value", "V"};
    case ElementKind::kCurrentSource:
      return {"an isource value", "A"};
    case ElementKind::kDiode:
      break;
  }
  return {"a value", "*"};
}

constexpr ValuePlace kTempPlace{"a temperature", "C"};
constexpr ValuePlace kAreaPlace{"an area factor", ""};

std::string Number(double v) { return fmt::format("{}", v); }

// A literal with no SI prefix, no unit and no %: "5", "0.05", "1e-3", "4R7".
bool IsBareNumber(const Value& v) {
  if (v.kind != Value::Kind::kLiteral || !v.unit.empty()) return false;
  return std::all_of(v.text.begin(), v.text.end(), [](char c) {
    return (c >= '0' && c <= '9') || c == '.' || c == 'e' || c == 'E' || c == '+' || c == '-' ||
           c == 'R';
  });
}

// `within 5`: absolute in the quantity's unit by the format's rule, but easily meant as 5 %.
void WarnBareTolerance(const Value& tol, const Expectation& x, std::vector<Diagnostic>* warnings) {
  const std::string unit = x.quantity.unit();
  const std::string as = unit.empty() ? "an absolute tolerance of " + tol.text
                                      : fmt::format("{} {} (absolute)", tol.text, unit);
  warnings->push_back(MakeError(
      x.where.file, ToSpan(x.where).line == 0 ? Span{} : tol.span,
      fmt::format("tolerance '{}' has no unit and no %: it is taken as {}", tol.text, as),
      fmt::format(
          "write {}% for a relative tolerance{}", tol.text,
          unit.empty() ? "" : fmt::format(", or {}{} for an absolute one", tol.text, unit))));
}

// "unknown part key 'IS'".
std::string UnknownKeyMessage(std::string_view key) {
  return fmt::format("unknown part key '{}'", key);
}

class Elaborator {
 public:
  Elaborator(const Netlist& netlist, const Overrides& overrides)
      : netlist_(netlist), d_(netlist.data()), file_(d_.file_name), overrides_(overrides) {}

  // Only the names, the overrides and the params.
  bool RunParams() {
    RegisterNames();
    if (Full()) return false;
    ApplyOverrides();
    if (Full()) return false;
    EvaluateParams();
    return errors_.empty();
  }

  bool Run(Circuit* circuit) {
    RegisterNames();
    if (Full()) return false;
    ApplyOverrides();
    if (Full()) return false;
    EvaluateParams();
    if (Full()) return false;
    BuildCircuit(circuit);
    return errors_.empty();
  }

  ParamValues Params() const {
    ParamValues values;
    for (std::size_t i = 0; i < d_.params.size(); ++i) {
      if (param_state_[i] == kDone) values.emplace_back(d_.params[i].name, param_values_[i]);
    }
    return values;
  }

  void Requests(const Circuit& circuit, Design* design) {
    design->bias_requested = d_.bias || d_.sweeps.empty();
    long long sweep_values = 0;  // of all sweep statements, against kMaxSweepValues
    design->params = Params();
    for (const SweepStmt& s : d_.sweeps) {
      std::vector<SweepAxis> axes;
      bool ok = true;
      for (const SweepPairStmt& p : s.pairs) {
        const bool duplicate = std::any_of(axes.begin(), axes.end(), [&](const SweepAxis& a) {
          return a.target.name == p.target;
        });
        if (duplicate) {
          Error(p.target_span,
                fmt::format("sweep target '{}' appears twice in one sweep", p.target));
          ok = false;
          continue;
        }
        Result<SweepAxis> axis =
            ResolveSweepAxis(p.target, p.range, netlist_, circuit, ToLocation(file_, p.target_span),
                             ToLocation(file_, p.range_span));
        if (!axis.ok()) {
          Take(std::move(axis).take_errors());
          ok = false;
          continue;
        }
        sweep_values += static_cast<long long>(axis->values.size());
        if (sweep_values > kMaxSweepValues) {
          Error(p.range_span, fmt::format("the sweep ranges of this netlist hold at least {} "
                                          "values together; the limit is {} (sweep fewer "
                                          "points, or in several runs)",
                                          sweep_values, kMaxSweepValues));
          return;
        }
        axes.push_back(std::move(*axis));
      }
      if (ok) design->sweeps.push_back(std::move(axes));
    }
    for (const QuantityText& q : d_.show) {
      Result<QuantityExpr> r =
          ParseQuantity(q.text, circuit, ToLocation(file_, q.span), &design->params);
      if (!r.ok()) {
        Take(std::move(r).take_errors());
        continue;
      }
      design->show.push_back(std::move(*r));
    }
    for (const ExpectStmt& e : d_.expects) {
      Result<QuantityExpr> q = ParseQuantity(e.quantity.text, circuit,
                                             ToLocation(file_, e.quantity.span), &design->params);
      if (!q.ok()) {
        Take(std::move(q).take_errors());
        continue;
      }
      const std::string unit = q->unit();
      const ValuePlace place{
          e.relation == Expectation::Relation::kEqual ? "the expected value" : "a bound",
          unit.empty() ? std::string_view("*") : std::string_view(unit)};
      if (e.relation != Expectation::Relation::kEqual) {
        ResolveBound(e, std::move(*q), place, design);
        continue;
      }
      std::optional<double> value = Evaluate(e.value, &place);
      if (!value) continue;
      Expectation x{std::move(*q),
                    *value,
                    0.05,
                    true,
                    ToLocation(file_, e.quantity.span),
                    Expectation::Relation::kEqual,
                    std::nullopt};
      if (e.tolerance) {
        const Value& t = *e.tolerance;
        if (t.unit == "%") {
          x.tolerance = t.number;
          x.relative = true;
        } else {
          const ValuePlace tol_place{"a tolerance", place.unit};
          std::optional<double> tol = Evaluate(t, &tol_place);
          if (!tol) continue;
          x.tolerance = *tol;
          x.relative = false;
        }
        if (!(x.tolerance > 0)) {
          Error(t.span, fmt::format("tolerance {} must be > 0", t.text));
          continue;
        }
        if (IsBareNumber(t)) WarnBareTolerance(t, x, &design->warnings);
      }
      design->expects.push_back(std::move(x));
    }
    for (const VaryStmt& v : d_.varies) ResolveVaryStmt(v, circuit, design);
  }

  // expect Q <= VALUE / >= VALUE: a constant bound (a literal with the quantity's unit, a
  // param, or an expression without quantities) or one that reads quantities.
  void ResolveBound(const ExpectStmt& e, QuantityExpr q, const ValuePlace& place, Design* design) {
    Expectation x{std::move(q), 0.0,         0.0, false, ToLocation(file_, e.quantity.span),
                  e.relation,   std::nullopt};
    if (e.value.kind == Value::Kind::kExpr) {
      Result<QuantityExpr> bound =
          ParseQuantity(e.value.text, design->circuit, ToLocation(file_, e.value.span));
      if (!bound.ok()) {
        Take(std::move(bound).take_errors());
        return;
      }
      if (bound->refs().empty()) {
        x.expected = bound->Evaluate(Solution{});
      } else {
        x.bound = std::move(*bound);
      }
    } else {
      std::optional<double> value = Evaluate(e.value, &place);
      if (!value) return;
      x.expected = *value;
    }
    design->expects.push_back(std::move(x));
  }

  void ResolveVaryStmt(const VaryStmt& v, const Circuit& circuit, Design* design) {
    std::optional<double> param_value;
    auto it = names_.find(v.target);
    if (it != names_.end() && it->second.kind == DefKind::kParam) {
      const auto i = static_cast<std::size_t>(it->second.index);
      if (param_state_[i] == kDone) param_value = param_values_[i];
    }
    Result<VaryLine> line = ResolveVary(v, file_, netlist_, circuit, param_value);
    if (!line.ok()) {
      Take(std::move(line).take_errors());
      return;
    }
    // One shared and one `each` line may meet on a PART.key (lot and device); any other
    // second line on a target is a mistake.
    for (const VaryLine& other : design->varies) {
      if (other.target.name != line->target.name || other.each != line->each) continue;
      Diagnostic& d =
          Error(v.target_span, fmt::format("'{}' is varied twice{}; a target takes one vary line, "
                                           "or for a part key one shared and one 'each' line",
                                           v.target, line->each ? " with 'each'" : ""));
      d.notes.push_back({other.where, "the first vary line of it"});
      return;
    }
    design->varies.push_back(std::move(*line));
  }

  // A heatsink no diode is mounted on carries no heat: likely a sink= left out.
  void HeatsinkWarnings(const Circuit& circuit, std::vector<Diagnostic>* warnings) {
    for (std::size_t k = 0; k < circuit.heatsinks.size(); ++k) {
      const bool used =
          std::any_of(circuit.sink_mounts.begin(), circuit.sink_mounts.end(),
                      [&](const SinkMount& m) { return m.sink == static_cast<int>(k); });
      if (used) continue;
      const Heatsink& h = circuit.heatsinks[k];
      warnings->push_back(MakeError(
          file_, ToSpan(h.where),
          fmt::format("heatsink '{}' has no diode mounted on it, so it stays at the ambient",
                      h.name),
          fmt::format("mount diodes with sink={}", h.name)));
    }
  }

  // Warnings about the circuit itself: nodes that one element only touches, and nodes
  // named like the reference node in other capitals.
  void NodeWarnings(const Circuit& circuit, std::vector<Diagnostic>* warnings) {
    std::vector<int> touches(circuit.nodes.size(), 0);
    std::vector<int> toucher(circuit.nodes.size(), -1);
    for (std::size_t i = 0; i < circuit.elements.size(); ++i) {
      const Element& e = circuit.elements[i];
      for (const int node : {e.node_a, e.node_b}) {
        const auto n = static_cast<std::size_t>(node);
        if (toucher[n] == static_cast<int>(i)) continue;  // both ends of one element
        toucher[n] = static_cast<int>(i);
        ++touches[n];
      }
    }
    for (std::size_t n = 1; n < circuit.nodes.size(); ++n) {
      const std::string_view name = circuit.nodes[n];
      const bool like_gnd = name.size() == 3 && std::tolower(name[0]) == 'g' &&
                            std::tolower(name[1]) == 'n' && std::tolower(name[2]) == 'd';
      if (!like_gnd && touches[n] != 1) continue;
      auto it = names_.find(name);
      const Span span = it != names_.end() ? SpanOf(d_, it->second) : Span{};
      if (like_gnd) {
        warnings->push_back(MakeError(file_, span,
                                      fmt::format("node '{}' is not the reference node: names are "
                                                  "case-sensitive, and the reference node is "
                                                  "written 'gnd' or '0'",
                                                  name),
                                      "write gnd if this node is meant to be the reference"));
      }
      if (touches[n] == 1) {
        const Element& e = circuit.elements[static_cast<std::size_t>(toucher[n])];
        // Any other node may be the intended one, gnd included (nodes[0]); SuggestName
        // skips the node's own name.
        const std::string near = like_gnd ? "" : SuggestNodeName(name, circuit.nodes);
        warnings->push_back(MakeError(
            file_, span,
            fmt::format("node '{}' is touched by one element only ({} '{}'), so no current can "
                        "flow through it",
                        name, ElementKindName(e.kind), e.name),
            near.empty() ? "connect a second element to it, or check the spelling of the name"
                         : fmt::format("did you mean '{}'?", near)));
      }
    }
  }

  // Design::params: every param with the numbers of the circuit its value reaches and
  // d(number)/d(param) (netlist.h, ParamReach), by forward-mode differentiation of the
  // values that name params (EvaluateDual).
  void ParamReaches(const Circuit& circuit, Design* design) {
    using Kind = SensitivityTarget::Kind;
    const std::size_t n = d_.params.size();
    // total[i]: d param_i / d param_j for every j it depends on, itself included.
    std::vector<std::vector<std::pair<int, double>>> total(n);
    for (int p : param_order_) {
      const auto i = static_cast<std::size_t>(p);
      total[i] = Through(ParamValue(i), total);
      total[i].insert(total[i].begin(), {p, 1.0});
    }
    design->param_info.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
      design->param_info[i].name = d_.params[i].name;
      design->param_info[i].value = param_values_[i];
      design->param_info[i].where = ToLocation(file_, d_.params[i].name_span);
    }
    if (n == 0) return;  // no param reaches anything (and no element value is read back)
    const auto place = [&](const Value& v, SensitivityTarget target) {
      for (const auto& [param, slope] : Through(v, total)) {
        if (slope != 0.0)
          design->param_info[static_cast<std::size_t>(param)].reach.push_back({target, slope});
      }
    };
    if (!overrides_.temp) {
      if (temp_override_) {
        place(*temp_override_, {Kind::kCircuitTemp, -1});
      } else if (d_.temp) {
        place(*d_.temp, {Kind::kCircuitTemp, -1});
      }
    }
    for (std::size_t i = 0; i < d_.parts.size() && i < circuit.parts.size(); ++i) {
      const auto key_place = [&](const std::string& key, const Value& v) {
        for (int k = 0; k < kModelKeyCount; ++k) {
          if (key == ModelKeyName(static_cast<ModelKey>(k))) {
            place(v, {Kind::kPartKey, static_cast<int>(i), static_cast<ModelKey>(k)});
          }
        }
      };
      for (const PartKeyStmt& k : d_.parts[i].keys) {
        if (part_overrides_.count({static_cast<int>(i), k.key}) == 0) key_place(k.key, k.value);
      }
      for (const auto& [key, value] : part_overrides_) {
        if (key.first == static_cast<int>(i)) key_place(key.second, *value);
      }
    }
    for (std::size_t i = 0; i < d_.elements.size() && i < circuit.elements.size(); ++i) {
      const ElementStmt& s = d_.elements[i];
      const int index = static_cast<int>(i);
      if (s.kind == ElementKind::kDiode) {
        const DiodeOptions& options = d_.OptionsOf(d_.DiodeOf(s));
        if (options.area) place(*options.area, {Kind::kArea, index});
        if (options.temp) place(*options.temp, {Kind::kElementTemp, index});
        continue;
      }
      auto over = element_overrides_.find(index);
      place(over != element_overrides_.end() ? *over->second : d_.ValueOf(s),
            {Kind::kElementValue, index});
    }
  }

  std::vector<Diagnostic> TakeErrors() {
    if (errors_.size() > static_cast<std::size_t>(kMaxDiagnostics)) {
      errors_.resize(static_cast<std::size_t>(kMaxDiagnostics));
    }
    return std::move(errors_);
  }

 private:
  bool Full() const { return errors_.size() >= static_cast<std::size_t>(kMaxDiagnostics); }

  Diagnostic& Error(const Span& span, std::string message, std::string hint = "") {
    errors_.push_back(
        MakeError(span.line == 0 ? "" : file_, span, std::move(message), std::move(hint)));
    return errors_.back();
  }
  void Take(std::vector<Diagnostic> errors) {
    for (Diagnostic& d : errors) {
      if (!d.message.empty()) errors_.push_back(std::move(d));
    }
  }
  void Note(Diagnostic* d, const Span& span, std::string text) {
    d->notes.push_back({ToLocation(file_, span), std::move(text)});
  }
  std::string Suggest(std::string_view wrong, const std::vector<std::string>& names) {
    const std::string near = SuggestName(wrong, names);
    return near.empty() ? "" : fmt::format("did you mean '{}'?", near);
  }
  std::vector<std::string> NamesOf(std::initializer_list<DefKind> kinds) const {
    std::vector<std::string> names;
    for (const auto& [name, def] : names_) {
      if (std::find(kinds.begin(), kinds.end(), def.kind) != kinds.end()) {
        names.push_back(std::string(name));
      }
    }
    std::sort(names.begin(), names.end());
    return names;
  }

  // --- names -------------------------------------------------------------------------

  // `hash` is Names::Hash(name).
  void Define(std::string_view name, std::size_t hash, DefKind kind, int index, const Span& span) {
    if (IsReserved(name)) {
      Error(span, fmt::format("'{}' is a reserved name; choose another name for this {}", name,
                              kind == DefKind::kParam      ? "param"
                              : kind == DefKind::kPart     ? "part"
                              : kind == DefKind::kHeatsink ? "heatsink"
                                                           : "element"));
      return;
    }
    auto [it, inserted] = names_.try_emplace(name, hash, Definition{kind, 0, index, -1});
    if (inserted) return;
    Diagnostic& d =
        Error(span, fmt::format("'{}' is already the name of a {} (line {}); "
                                "elements, nodes, parts and params share one "
                                "namespace",
                                name, KindWord(d_, it->second), SpanOf(d_, it->second).line));
    Note(&d, SpanOf(d_, it->second),
         fmt::format("'{}' is defined here as a {}", name, KindWord(d_, it->second)));
  }

  // In file order, so that the later of two definitions is the one reported. Each name's
  // slot is prefetched a batch ahead of its insertion: in a large table nearly every
  // insertion starts with a cache miss on a random slot, and a batch waits for all of its
  // misses at once rather than one after the other.
  void RegisterNames() {
    const std::array<std::size_t, 4> sizes = {d_.params.size(), d_.parts.size(), d_.elements.size(),
                                              d_.heatsinks.size()};
    names_.reserve(2 * (sizes[0] + sizes[1] + sizes[2] + sizes[3]));
    struct Pending {
      std::size_t list, index, hash;
    };
    std::array<Pending, 16> batch;
    std::size_t pending = 0;
    const auto define_batch = [&] {
      for (std::size_t j = 0; j < pending; ++j) {
        const Pending& p = batch[j];
        Define(NameAt(p.list, p.index), p.hash, kListKinds[p.list], static_cast<int>(p.index),
               NameSpan(p.list, p.index));
      }
      pending = 0;
    };
    VisitInFileOrder(
        sizes, [&](std::size_t list, std::size_t i) { return NameSpan(list, i); },
        [&](std::size_t list, std::size_t i) {
          const std::size_t hash = Names::Hash(NameAt(list, i));
          names_.Prefetch(hash);
          batch[pending++] = {list, i, hash};
          if (pending == batch.size()) define_batch();
        });
    define_batch();
  }
  // The lists of RegisterNames: params, parts, elements, heatsinks.
  static constexpr std::array<DefKind, 4> kListKinds = {DefKind::kParam, DefKind::kPart,
                                                        DefKind::kElement, DefKind::kHeatsink};
  std::string_view NameAt(std::size_t list, std::size_t i) const {
    switch (list) {
      case 0:
        return d_.params[i].name;
      case 1:
        return d_.parts[i].name;
      case 2:
        return d_.elements[i].name();
    }
    return d_.heatsinks[i].name;
  }
  Span NameSpan(std::size_t list, std::size_t i) const {
    return SpanOf(d_, Definition{kListKinds[list], 0, static_cast<int>(i), -1});
  }

  // --- overrides ---------------------------------------------------------------------

  // Parses the value of one --set; errors carry the option in their message.
  std::optional<Value> OverrideValue(const Override& o, const std::string& what) {
    const LogicalLine line = SyntheticLine(o.value_text, Span{});
    Scanner scanner(line);
    std::vector<Diagnostic> errors;
    Value value;
    bool ok = ParseValue(&scanner, "", what, &value, &errors);
    if (ok && !scanner.AtEnd()) {
      const Token t = scanner.NextWord();
      errors.push_back(
          MakeError("", Span{}, fmt::format("unexpected '{}' after the value", t.text)));
      ok = false;
    }
    if (!ok) {
      for (Diagnostic& e : errors) {
        e.message = fmt::format("--set {}={}: {}", o.name, o.value_text, e.message);
      }
      Take(std::move(errors));
      return std::nullopt;
    }
    value.text = o.value_text;
    return value;
  }

  void ApplyOverrides() {
    for (const Override& o : overrides_.sets) {
      const std::string context = fmt::format("--set {}={}", o.name, o.value_text);
      const std::size_t dot = o.name.find('.');
      if (o.name == "temp") {
        if (auto v = OverrideValue(o, "a temperature")) Store(&temp_override_, std::move(*v));
        continue;
      }
      if (dot != std::string::npos) {
        const std::string part = o.name.substr(0, dot);
        const std::string key = o.name.substr(dot + 1);
        auto it = names_.find(part);
        if (it != names_.end() && it->second.kind == DefKind::kHeatsink) {
          Error(Span{},
                fmt::format("{}: '{}' is a heatsink; its thermal_res is not an "
                            "override target in this version (docs/thermal.md)",
                            context, part),
                "edit the heatsink line, or give the parts' thermal_res instead");
          continue;
        }
        if (it == names_.end() || it->second.kind != DefKind::kPart) {
          Error(Span{}, fmt::format("{}: there is no part named '{}'", context, part),
                Suggest(part, NamesOf({DefKind::kPart})));
          continue;
        }
        if (!FindPartKey(key)) {
          Error(Span{}, fmt::format("{}: {}", context, UnknownKeyMessage(key)),
                PartKeyHint(key, part + "."));
          continue;
        }
        if (auto v = OverrideValue(o, fmt::format("a value for {}", key))) {
          part_overrides_[{it->second.index, key}] = Keep(std::move(*v));
        }
        continue;
      }
      auto it = names_.find(o.name);
      const bool is_node =
          o.name == "gnd" || o.name == "0" ||
          std::any_of(d_.elements.begin(), d_.elements.end(), [&](const ElementStmt& e) {
            return e.node_a() == o.name || e.node_b() == o.name;
          });
      if (it == names_.end() && is_node) {
        Error(Span{}, fmt::format("{}: '{}' is a node; --set takes a param, an element value or "
                                  "PART.key",
                                  context, o.name));
        continue;
      }
      if (it == names_.end()) {
        Error(Span{},
              fmt::format("{}: there is no param, element or part key named '{}'", context, o.name),
              Suggest(o.name, NamesOf({DefKind::kParam, DefKind::kElement})));
        continue;
      }
      const Definition& def = it->second;
      if (def.kind == DefKind::kParam) {
        if (auto v = OverrideValue(o, "a param value")) {
          param_overrides_[def.index] = Keep(std::move(*v));
        }
      } else if (def.kind == DefKind::kElement) {
        const ElementStmt& e = d_.elements[static_cast<std::size_t>(def.index)];
        if (e.kind == ElementKind::kDiode) {
          Error(Span{}, fmt::format("{}: diode '{}' has no value to set; set a key of its part "
                                    "instead ({}.KEY)",
                                    context, o.name, d_.DiodeOf(e).part_name()));
          continue;
        }
        if (auto v = OverrideValue(o, std::string(ElementPlace(e.kind).what))) {
          element_overrides_[def.index] = Keep(std::move(*v));
        }
      } else {
        Error(Span{}, fmt::format("{}: '{}' is a {}; --set takes a param, an element value or "
                                  "PART.key",
                                  context, o.name, KindWord(d_, def)));
      }
    }
  }

  const Value* Keep(Value v) {
    kept_.push_back(std::move(v));
    return &kept_.back();
  }
  void Store(const Value** slot, Value v) { *slot = Keep(std::move(v)); }

  // --- evaluation --------------------------------------------------------------------

  // The meaning of a name inside an expression: a param's value.
  Result<double> LookupParam(const Expr& name_node) {
    const std::string& name = name_node.name;
    auto it = names_.find(name);
    if (it != names_.end() && it->second.kind == DefKind::kParam) {
      const auto i = static_cast<std::size_t>(it->second.index);
      if (param_state_[i] == kDone) return param_values_[i];
      return Diagnostic{};  // already reported (a failed or cyclic param)
    }
    const std::string file = name_node.span.line == 0 ? "" : file_;
    if (it != names_.end()) {
      return MakeError(file, name_node.span,
                       fmt::format("'{}' is a {}, not a param; an expression can use params and "
                                   "the constants pi, k_boltzmann and q_electron",
                                   name, KindWord(d_, it->second)));
    }
    if (name.find('.') != std::string::npos) {
      return MakeError(file, name_node.span,
                       fmt::format("'{}' is a quantity; a value can use params only", name));
    }
    std::vector<std::string> candidates = NamesOf({DefKind::kParam});
    candidates.insert(candidates.end(), {"pi", "k_boltzmann", "q_electron"});
    return MakeError(file, name_node.span, fmt::format("undefined param '{}'", name),
                     Suggest(name, candidates));
  }

  // The number of a value at a place (nullptr: inside an expression, any unit).
  std::optional<double> Evaluate(const Value& v, const ValuePlace* place,
                                 const std::string& context = "") {
    auto fail = [&](std::vector<Diagnostic> errors) -> std::optional<double> {
      for (Diagnostic& e : errors) {
        if (!context.empty() && !e.message.empty()) {
          e.message = fmt::format("{}: {}", context, e.message);
        }
      }
      Take(std::move(errors));
      return std::nullopt;
    };
    // A reference, not a copy: this runs once per element, and a long path is an allocation.
    const std::string& file = v.span.line == 0 ? FileName().str() : file_.str();
    switch (v.kind) {
      case Value::Kind::kLiteral: {
        double out = 0;
        std::string message, hint;
        NumberLiteral literal{v.number, v.unit, 0};
        if (place) {
          if (!ApplyPlace(literal, v.text, *place, &out, &message, &hint)) {
            return fail({MakeError(file, v.unit_span, message, hint)});
          }
        } else {
          if (v.unit == "K" || v.unit == "C") {
            return fail({MakeError(file, v.unit_span,
                                   fmt::format("unit '{}' is not allowed in a param value (no "
                                               "conversion happens there)",
                                               v.unit))});
          }
          out = v.number;
        }
        return out;
      }
      case Value::Kind::kName: {
        Expr node;
        node.kind = Expr::Kind::kName;
        node.name = v.text;
        node.span = v.span;
        if (auto c = ConstantValue(v.text)) return *c;
        Result<double> r = LookupParam(node);
        if (!r.ok()) return fail(std::move(r).take_errors());
        return *r;
      }
      case Value::Kind::kExpr: {
        Result<double> r = EvaluateExpr(
            *v.expr, [this](const Expr& n) { return LookupParam(n); }, file);
        if (!r.ok()) return fail(std::move(r).take_errors());
        return *r;
      }
    }
    return std::nullopt;
  }

  // The params that value `v` names (each once), by index.
  std::vector<int> ParamsNamed(const Value& v) {
    std::vector<std::string_view> names;
    if (v.kind == Value::Kind::kName) names.push_back(v.text);
    if (v.kind == Value::Kind::kExpr) {
      std::vector<const Expr*> used;
      CollectNames(*v.expr, &used);
      for (const Expr* e : used) names.push_back(e->name);
    }
    std::vector<int> params;
    for (std::string_view name : names) {
      auto it = names_.find(name);
      if (it == names_.end() || it->second.kind != DefKind::kParam) continue;
      if (std::find(params.begin(), params.end(), it->second.index) == params.end()) {
        params.push_back(it->second.index);
      }
    }
    return params;
  }
  // d v / d param `along` at the params' values, the other params held.
  double PartialAlong(const Value& v, int along) {
    if (v.kind == Value::Kind::kName) return 1.0;  // v is the param itself
    if (v.kind != Value::Kind::kExpr) return 0.0;
    const auto lookup = [&](const Expr& name) -> Dual {
      auto it = names_.find(name.name);
      if (it == names_.end() || it->second.kind != DefKind::kParam) return {std::nan(""), 0.0};
      const int p = it->second.index;
      return {param_values_[static_cast<std::size_t>(p)], p == along ? 1.0 : 0.0};
    };
    return EvaluateDual(*v.expr, lookup).slope;
  }
  // d v / d param_j for every j that v reaches through the params it names, given each
  // named param's own total (d param_k / d param_j).
  std::vector<std::pair<int, double>> Through(
      const Value& v, const std::vector<std::vector<std::pair<int, double>>>& total) {
    std::vector<std::pair<int, double>> out;
    for (int k : ParamsNamed(v)) {
      const double partial = PartialAlong(v, k);
      for (const auto& [j, slope] : total[static_cast<std::size_t>(k)]) {
        auto it = std::find_if(out.begin(), out.end(), [&](const auto& e) { return e.first == j; });
        if (it == out.end()) {
          out.push_back({j, partial * slope});
        } else {
          it->second += partial * slope;
        }
      }
    }
    return out;
  }

  const Value& ParamValue(std::size_t i) const {
    auto it = param_overrides_.find(static_cast<int>(i));
    return it != param_overrides_.end() ? *it->second : d_.params[i].value;
  }

  // Params in dependency order (iterative depth-first search); a cycle is reported once
  // with every param on it.
  void EvaluateParams() {
    const std::size_t n = d_.params.size();
    param_state_.assign(n, kUnvisited);
    param_values_.assign(n, 0.0);
    std::vector<std::vector<int>> deps(n);
    for (std::size_t i = 0; i < n; ++i) {
      const Value& v = ParamValue(i);
      std::vector<const Expr*> used;
      if (v.kind == Value::Kind::kExpr) CollectNames(*v.expr, &used);
      std::vector<std::string> names;
      for (const Expr* e : used) names.push_back(e->name);
      if (v.kind == Value::Kind::kName) names.push_back(v.text);
      for (const std::string& name : names) {
        auto it = names_.find(name);
        if (it != names_.end() && it->second.kind == DefKind::kParam) {
          deps[i].push_back(it->second.index);
        }
      }
    }
    std::vector<std::pair<int, std::size_t>> stack;  // param, next dependency
    for (std::size_t root = 0; root < n && !Full(); ++root) {
      if (param_state_[root] != kUnvisited) continue;
      stack.push_back({static_cast<int>(root), 0});
      param_state_[root] = kOnStack;
      while (!stack.empty()) {
        auto& [p, next] = stack.back();
        const auto pi = static_cast<std::size_t>(p);
        if (next < deps[pi].size()) {
          const int q = deps[pi][next++];
          const auto qi = static_cast<std::size_t>(q);
          if (param_state_[qi] == kUnvisited) {
            param_state_[qi] = kOnStack;
            stack.push_back({q, 0});
          } else if (param_state_[qi] == kOnStack) {
            ReportCycle(stack, q);
          }
          continue;
        }
        if (param_state_[pi] == kOnStack) {
          const ValuePlace* none = nullptr;
          const std::size_t before = errors_.size();
          std::optional<double> v = Evaluate(ParamValue(pi), none, OverrideContext(pi));
          if (v && std::isfinite(*v)) {
            param_values_[pi] = *v;
            param_state_[pi] = kDone;
            param_order_.push_back(p);
          } else {
            if (v && errors_.size() == before) {
              Error(ParamValue(pi).span,
                    fmt::format("param '{}' is not a finite number", d_.params[pi].name));
            }
            param_state_[pi] = kFailed;
          }
        }
        stack.pop_back();
      }
    }
  }

  std::string OverrideContext(std::size_t param) const {
    auto it = param_overrides_.find(static_cast<int>(param));
    if (it == param_overrides_.end()) return "";
    return fmt::format("--set {}={}", d_.params[param].name, it->second->text);
  }

  void ReportCycle(const std::vector<std::pair<int, std::size_t>>& stack, int start) {
    std::size_t first = 0;
    while (stack[first].first != start) ++first;
    std::string path;
    for (std::size_t k = first; k < stack.size(); ++k) {
      path += d_.params[static_cast<std::size_t>(stack[k].first)].name + " -> ";
    }
    path += d_.params[static_cast<std::size_t>(start)].name;
    const auto& s = d_.params[static_cast<std::size_t>(start)];
    Diagnostic& d =
        Error(s.name_span, fmt::format("params depend on each other in a cycle: {}", path));
    for (std::size_t k = first + 1; k < stack.size(); ++k) {
      const auto& p = d_.params[static_cast<std::size_t>(stack[k].first)];
      Note(&d, p.name_span, fmt::format("'{}' is defined here", p.name));
    }
    for (std::size_t k = first; k < stack.size(); ++k) {
      param_state_[static_cast<std::size_t>(stack[k].first)] = kFailed;
    }
  }

  // --- the circuit -------------------------------------------------------------------

  // How many element statements ahead BuildCircuit prefetches the slots of their nodes: a
  // node first named in a large table is a cache miss on a random slot.
  static constexpr std::size_t kNodePrefetch = 8;
  void PrefetchNodes(std::size_t statement) const {
    const ElementStmt& e = d_.elements[statement];
    names_.Prefetch(Names::Hash(e.node_a()));
    names_.Prefetch(Names::Hash(e.node_b()));
  }

  // The node at terminal `terminal` (0: node_a, 1: node_b) of element statement `statement`.
  int NodeIndex(std::size_t statement, int terminal, Circuit* circuit) {
    const ElementStmt& e = d_.elements[statement];
    const std::string_view name = terminal == 0 ? e.node_a() : e.node_b();
    const Span span = terminal == 0 ? e.a_span() : e.b_span();
    if (name == "gnd" || name == "0") return kGroundNode;
    auto [it, inserted] =
        names_.try_emplace(name, Definition{DefKind::kNode, static_cast<std::uint8_t>(terminal), -1,
                                            static_cast<int>(statement)});
    if (inserted) {
      it->second.index = circuit->AddNode(name);
      return it->second.index;
    }
    if (it->second.kind == DefKind::kNode) return it->second.index;
    Diagnostic& d = Error(span, fmt::format("'{}' is used as a node of {} '{}' but is the name "
                                            "of a {} (line {})",
                                            name, ElementKindName(e.kind), e.name(),
                                            KindWord(d_, it->second), SpanOf(d_, it->second).line));
    Note(&d, SpanOf(d_, it->second),
         fmt::format("'{}' is defined here as a {}", name, KindWord(d_, it->second)));
    return -1;
  }

  void BuildParts(Circuit* circuit) {
    circuit->parts.reserve(d_.parts.size());
    for (std::size_t i = 0; i < d_.parts.size() && !Full(); ++i) {
      const PartStmt& s = d_.parts[i];
      Part part;
      part.name = s.name;
      part.where = ToLocation(file_, s.name_span);
      std::map<std::string, const PartKeyStmt*> given;
      for (const PartKeyStmt& k : s.keys) {
        const PartKeyInfo* info = FindPartKey(k.key);
        if (!info) {
          Error(k.key_span, fmt::format("{} in part '{}'", UnknownKeyMessage(k.key), s.name),
                PartKeyHint(k.key));
          continue;
        }
        auto [it, inserted] = given.try_emplace(k.key, &k);
        if (!inserted) {
          Diagnostic& d = Error(k.key_span, fmt::format("part key '{}' is given twice in part "
                                                        "'{}'",
                                                        k.key, s.name));
          Note(&d, it->second->key_span, "the first value is here");
          continue;
        }
        auto over = part_overrides_.find({static_cast<int>(i), k.key});
        if (over == part_overrides_.end()) SetKey(&part, *info, k.value, "");
      }
      std::vector<std::string> written;
      for (const auto& [key, value] : part_overrides_) {
        if (key.first != static_cast<int>(i)) continue;
        SetKey(&part, *FindPartKey(key.second), *value,
               fmt::format("--set {}.{}={}", s.name, key.second, value->text));
        written.push_back(key.second);
      }
      if (s.fit_file) {
        for (const auto& [key, stmt] : given) written.push_back(key);
        Take(FitPartKeys(file_, *s.fit_file, ToLocation(file_, s.fit_span), s.name, written,
                         &part.model));
      }
      circuit->parts.push_back(std::move(part));
    }
  }

  void SetKey(Part* part, const PartKeyInfo& info, const Value& value, const std::string& context) {
    const ValuePlace place = PartKeyPlace(info);
    std::optional<double> v = Evaluate(value, &place, context);
    if (!v) return;
    if (!PartKeyValueOk(info, *v)) {
      Diagnostic& d =
          Error(value.span, fmt::format("{}part '{}': {} = {} is out of range; it "
                                        "must be {}",
                                        context.empty() ? "" : context + ": ", part->name, info.key,
                                        Number(*v), PartKeyRule(info, *v)));
      (void)d;
      return;
    }
    SetPartKey(&part->model, info.key, *v);
  }

  void BuildCircuit(Circuit* circuit) {
    if (d_.title) circuit->title = *d_.title;
    // Circuit temperature: --temp, else --set temp=, else the temp statement, else 25.
    if (overrides_.temp) {
      circuit->temp = *overrides_.temp;
    } else if (temp_override_) {
      if (auto t = Evaluate(*temp_override_, &kTempPlace,
                            fmt::format("--set temp={}", temp_override_->text))) {
        circuit->temp = *t;
      }
    } else if (d_.temp) {
      if (auto t = Evaluate(*d_.temp, &kTempPlace)) circuit->temp = *t;
    }
    if (!(circuit->temp > -kZeroCelsius) || !std::isfinite(circuit->temp)) {
      Error(d_.temp && !overrides_.temp ? d_.temp->span : Span{},
            fmt::format("circuit temperature {} C is not above absolute zero (-273.15 C)",
                        Number(circuit->temp)));
    }
    BuildParts(circuit);
    circuit->elements.reserve(d_.elements.size());
    for (std::size_t i = 0; i < d_.elements.size() && !Full(); ++i) {
      if (i + kNodePrefetch < d_.elements.size()) PrefetchNodes(i + kNodePrefetch);
      const ElementStmt& s = d_.elements[i];
      Element e;
      e.kind = s.kind;
      e.name = circuit->Keep(s.name());
      e.where = ToLocation(file_, s.name_span());
      const int a = NodeIndex(i, 0, circuit);
      const int b = NodeIndex(i, 1, circuit);
      e.node_a = std::max(a, 0);
      e.node_b = std::max(b, 0);
      if (s.kind == ElementKind::kDiode) {
        BuildDiode(s, &e);
      } else {
        auto over = element_overrides_.find(static_cast<int>(i));
        const Value& value = over != element_overrides_.end() ? *over->second : d_.ValueOf(s);
        const std::string context = over != element_overrides_.end()
                                        ? fmt::format("--set {}={}", s.name(), value.text)
                                        : "";
        const ValuePlace place = ElementPlace(s.kind);
        if (auto v = Evaluate(value, &place, context)) {
          e.value = *v;
          if (s.kind == ElementKind::kResistor && !UsableResistance(*v)) {
            Error(value.span, fmt::format("{}resistor '{}' has resistance {} Ohm; it must be {}",
                                          context.empty() ? "" : context + ": ", s.name(),
                                          Number(*v), *v > 0 ? kResistanceRule : "> 0"));
          }
        }
      }
      circuit->elements.push_back(std::move(e));
    }
    BuildResistorRatings(circuit);
    BuildHeatsinks(circuit);
  }

  void BuildHeatsinks(Circuit* circuit) {
    static constexpr ValuePlace kPlace{"thermal_res", "K/W"};
    for (const HeatsinkStmt& h : d_.heatsinks) {
      Heatsink sink;
      sink.name = h.name;
      sink.where = ToLocation(file_, h.name_span);
      if (std::optional<double> v = Evaluate(h.thermal_res, &kPlace)) {
        if (!(std::isfinite(*v) && *v >= 0)) {
          Error(h.thermal_res.span,
                fmt::format("heatsink '{}': thermal_res = {} is out of range; it must be >= 0",
                            h.name, Number(*v)));
        }
        sink.thermal_res = *v;
      }
      circuit->heatsinks.push_back(std::move(sink));
    }
    for (const SinkMountStmt& m : d_.sink_mounts) {
      if (static_cast<std::size_t>(m.element) >= circuit->elements.size()) break;  // Full()
      const Element& e = circuit->elements[static_cast<std::size_t>(m.element)];
      auto it = names_.find(m.sink);
      if (it == names_.end() || it->second.kind != DefKind::kHeatsink) {
        if (it != names_.end()) {
          Diagnostic& d = Error(m.sink_span, fmt::format("'{}' is a {}, not a heatsink; sink= "
                                                         "names a 'heatsink' statement",
                                                         m.sink, KindWord(d_, it->second)));
          Note(&d, SpanOf(d_, it->second), fmt::format("'{}' is defined here", m.sink));
          continue;
        }
        const std::string near = SuggestName(m.sink, NamesOf({DefKind::kHeatsink}));
        Diagnostic& d = Error(
            m.sink_span,
            fmt::format("unknown heatsink '{}' on diode '{}'; sink= names a 'heatsink' statement",
                        m.sink, e.name),
            near.empty() ? fmt::format("add a line: heatsink {} thermal_res=VALUE", m.sink)
                         : fmt::format("did you mean '{}'?", near));
        if (!near.empty()) {
          Note(&d, SpanOf(d_, names_.find(near)->second),
               fmt::format("'{}' is defined here", near));
        }
        continue;
      }
      if (e.temp) {
        const DiodeOptions& options =
            d_.OptionsOf(d_.DiodeOf(d_.elements[static_cast<std::size_t>(m.element)]));
        Diagnostic& d = Error(m.key_span,
                              fmt::format("diode '{}' has both temp= and sink=: temp= fixes its "
                                          "junction temperature, sink= lets its dissipation set it",
                                          e.name),
                              "keep one of the two");
        if (options.temp) Note(&d, options.temp->span, "its temp= is here");
        continue;
      }
      circuit->sink_mounts.push_back({m.element, it->second.index});
    }
  }

  void BuildResistorRatings(Circuit* circuit) {
    static constexpr ValuePlace kPlace{"max_power", "W"};
    for (const ResistorRatingStmt& r : d_.resistor_ratings) {
      if (static_cast<std::size_t>(r.element) >= circuit->elements.size()) break;  // Full()
      std::optional<double> v = Evaluate(r.value, &kPlace);
      if (!v) continue;
      if (!(std::isfinite(*v) && *v > 0)) {
        Error(r.value.span,
              fmt::format("resistor '{}': max_power = {} is out of range; it must be > 0",
                          circuit->elements[static_cast<std::size_t>(r.element)].name, Number(*v)));
        continue;
      }
      circuit->resistor_ratings.push_back({r.element, *v});
    }
  }

  void BuildDiode(const ElementStmt& s, Element* e) {
    const DiodeStmt& diode = d_.DiodeOf(s);
    const std::string_view part = diode.part_name();
    auto it = names_.find(part);
    if (it == names_.end() || it->second.kind != DefKind::kPart) {
      if (it != names_.end()) {
        Diagnostic& d =
            Error(diode.part_span(), fmt::format("'{}' is a {}, not a part; expected the "
                                                 "name of a 'part' statement",
                                                 part, KindWord(d_, it->second)));
        Note(&d, SpanOf(d_, it->second), fmt::format("'{}' is defined here", part));
        return;
      }
      const std::string near = SuggestName(part, NamesOf({DefKind::kPart}));
      Diagnostic& d = Error(diode.part_span(),
                            fmt::format("unknown part '{}'; expected the name of a 'part' "
                                        "statement",
                                        part),
                            near.empty() ? "" : fmt::format("did you mean '{}'?", near));
      if (!near.empty()) {
        Note(&d, SpanOf(d_, names_.find(near)->second), fmt::format("'{}' is defined here", near));
      }
      return;
    }
    e->part = it->second.index;
    const DiodeOptions& options = d_.OptionsOf(diode);
    if (options.area) {
      if (auto v = Evaluate(*options.area, &kAreaPlace)) {
        e->area = *v;
        if (!(*v > 0)) {
          Error(options.area->span,
                fmt::format("diode '{}' has area {}; it must be > 0", s.name(), Number(*v)));
        }
      }
    }
    if (options.temp) {
      if (auto v = Evaluate(*options.temp, &kTempPlace)) {
        e->temp = *v;
        if (!(*v > -kZeroCelsius)) {
          Error(options.temp->span, fmt::format("diode '{}' has temperature {} C; it must be above "
                                                "absolute zero (-273.15 C)",
                                                s.name(), Number(*v)));
        }
      }
    }
  }

  static constexpr char kUnvisited = 0, kOnStack = 1, kDone = 2, kFailed = 3;

  const Netlist& netlist_;
  const NetlistData& d_;
  const FileName file_;  // shared by the location of every element and part
  const Overrides& overrides_;
  std::vector<Diagnostic> errors_;
  Names names_;
  std::deque<Value> kept_;  // override values (stable addresses)
  std::map<int, const Value*> param_overrides_;
  std::map<int, const Value*> element_overrides_;
  std::map<std::pair<int, std::string>, const Value*> part_overrides_;
  const Value* temp_override_ = nullptr;
  std::vector<char> param_state_;
  std::vector<double> param_values_;
  std::vector<int> param_order_;  // the params evaluated, each after those it names
};

}  // namespace

Result<Circuit> ElaborateCircuit(const Netlist& netlist, const Overrides& overrides) {
  Elaborator e(netlist, overrides);
  Circuit circuit;
  if (!e.Run(&circuit)) return e.TakeErrors();
  return circuit;
}

Result<ParamValues> ElaborateParams(const Netlist& netlist, const Overrides& overrides) {
  Elaborator e(netlist, overrides);
  if (!e.RunParams()) return e.TakeErrors();
  return e.Params();
}

Result<Design> Elaborate(const Netlist& netlist, const Overrides& overrides) {
  Elaborator e(netlist, overrides);
  Design design;
  if (!e.Run(&design.circuit)) return e.TakeErrors();
  e.Requests(design.circuit, &design);
  e.NodeWarnings(design.circuit, &design.warnings);
  e.HeatsinkWarnings(design.circuit, &design.warnings);
  e.ParamReaches(design.circuit, &design);
  std::vector<Diagnostic> errors = e.TakeErrors();
  if (!errors.empty()) return errors;
  return design;
}

Result<SweepTarget> ResolveSweepTarget(std::string_view name, const Netlist& netlist,
                                       const Circuit& circuit, const SourceLocation& where) {
  SweepTarget t;
  t.name = std::string(name);
  const Span span = ToSpan(where);
  const std::string& file = where.file;
  if (name == "temp") {
    t.kind = SweepTarget::Kind::kTemp;
    return t;
  }
  const std::size_t dot = name.find('.');
  if (dot != std::string_view::npos) {
    const std::string part(name.substr(0, dot));
    const std::string key(name.substr(dot + 1));
    const int index = circuit.FindPart(part);
    if (index < 0 && circuit.FindHeatsink(part) >= 0) {
      return MakeError(file, span,
                       fmt::format("'{}' is a heatsink; its thermal_res is not a sweep target in "
                                   "this version (docs/thermal.md)",
                                   part),
                       "sweep a part's thermal_res (PART.thermal_res) instead");
    }
    if (index < 0) {
      std::vector<std::string> parts;
      for (const Part& p : circuit.parts) parts.push_back(p.name);
      const std::string near = SuggestName(part, parts);
      return MakeError(file, span,
                       fmt::format("unknown part '{}' in the sweep target '{}'", part, name),
                       near.empty() ? "" : fmt::format("did you mean '{}'?", near));
    }
    if (!FindPartKey(key)) {
      return MakeError(file, span, UnknownKeyMessage(key), PartKeyHint(key, part + "."));
    }
    t.kind = SweepTarget::Kind::kPartKey;
    t.index = index;
    t.key = key;
    return t;
  }
  const int element = circuit.FindElement(name);
  if (element >= 0) {
    const Element& e = circuit.elements[static_cast<std::size_t>(element)];
    if (e.kind == ElementKind::kDiode) {
      return MakeError(file, span,
                       fmt::format("diode '{}' has no value to sweep; sweep a key of its part "
                                   "(PART.key) or temp",
                                   name));
    }
    t.kind = SweepTarget::Kind::kElement;
    t.index = element;
    return t;
  }
  std::vector<std::string> candidates = {"temp"};
  for (const ParamStmt& p : netlist.data().params) {
    if (p.name == name) {
      t.kind = SweepTarget::Kind::kParam;
      return t;
    }
    candidates.push_back(p.name);
  }
  for (const Element& e : circuit.elements) {
    if (e.kind != ElementKind::kDiode) candidates.push_back(e.name);
  }
  const std::string near = SuggestName(name, candidates);
  return MakeError(file, span,
                   fmt::format("unknown sweep target '{}'; expected an element, a param, "
                               "PART.key or temp",
                               name),
                   near.empty() ? "" : fmt::format("did you mean '{}'?", near));
}

ValuePlace TargetPlace(const SweepTarget& target, const Circuit& circuit) {
  switch (target.kind) {
    case SweepTarget::Kind::kTemp:
      return kTempPlace;
    case SweepTarget::Kind::kElement:
      return ElementPlace(circuit.elements[static_cast<std::size_t>(target.index)].kind);
    case SweepTarget::Kind::kPartKey:
      return PartKeyPlace(*FindPartKey(target.key));
    case SweepTarget::Kind::kParam:
      break;
  }
  return ValuePlace{"a range", "*"};
}

Result<SweepAxis> ResolveSweepAxis(std::string_view target, std::string_view range,
                                   const Netlist& netlist, const Circuit& circuit,
                                   const SourceLocation& target_where,
                                   const SourceLocation& range_where) {
  Result<SweepTarget> t = ResolveSweepTarget(target, netlist, circuit, target_where);
  if (!t.ok()) return std::move(t).take_errors();
  const ValuePlace place = TargetPlace(*t, circuit);
  SweepAxis axis;
  Result<std::vector<double>> values = ExpandRangeIn(range, range_where, place, &axis.logarithmic);
  if (!values.ok()) return std::move(values).take_errors();
  axis.target = std::move(*t);
  axis.values = std::move(*values);
  axis.range_text = std::string(range);
  axis.where = target_where;
  return axis;
}

}  // namespace knee
