// ParseNetlist: statements (netlist-format.md, "Statements") from the scanner's tokens.
// Values stay unevaluated; names are resolved later by Elaborate.
#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <memory>

#include "expr.h"
#include "knee/diagnostics.h"
#include "knee/netlist.h"
#include "lexer.h"
#include "numbers.h"
#include "syntax.h"

namespace knee {
namespace {

constexpr std::array<const char*, 14> kKeywords = {
    "title", "temp", "param", "part", "resistor", "vsource", "isource",
    "diode", "bias", "sweep", "show", "expect",   "vary",    "heatsink"};

std::string Quote(const Token& t) {
  if (t.kind == Tok::kEnd) return "the end of the line";
  if (t.kind == Tok::kString) return fmt::format("\"{}\"", t.text);
  return fmt::format("'{}'", t.text);
}

bool StartsLikeNumber(std::string_view w) {
  const char c = w[0];
  return (c >= '0' && c <= '9') || c == '.' || c == '-' || c == '+';
}

bool ValueError(const std::string& file, std::vector<Diagnostic>* errors, const Span& span,
                std::string message, std::string hint = "") {
  errors->push_back(MakeError(file, span, std::move(message), std::move(hint)));
  return false;
}
bool ValueError(Scanner* scanner, const std::string& file, std::vector<Diagnostic>* errors,
                const Token& t, std::string message) {
  if (t.kind == Tok::kError) return ValueError(file, errors, scanner->SpanOf(t), t.error);
  return ValueError(file, errors, scanner->SpanOf(t), std::move(message));
}

}  // namespace

bool ParseValue(Scanner* scanner, const std::string& file, const std::string& what, Value* value,
                std::vector<Diagnostic>* errors) {
  const Token t = scanner->NextWord();
  if (t.kind == Tok::kLParen) {
    ExprParser parser(scanner, file, errors);
    auto expr = parser.ParseParenthesized(t);
    if (!expr) return false;
    value->kind = Value::Kind::kExpr;
    value->expr = std::move(expr);
    value->text = std::string(scanner->Text(t.begin, scanner->offset()));
    value->span = scanner->SpanOf(t.begin, scanner->offset());
    return true;
  }
  if (t.kind == Tok::kWord && StartsLikeNumber(t.text)) {
    NumberLiteral literal;
    NumberError error;
    if (!ParseNumber(t.text, &literal, &error)) {
      return ValueError(
          file, errors,
          scanner->SpanOf(t.begin + error.offset, t.begin + error.offset + error.length),
          error.message, error.hint);
    }
    value->kind = Value::Kind::kLiteral;
    value->number = literal.value;
    value->unit = literal.unit;
    value->text = std::string(t.text);
    value->span = scanner->SpanOf(t);
    value->unit_span = scanner->SpanOf(t.begin + literal.unit_offset, t.end);
    return true;
  }
  if (t.kind == Tok::kWord && IsName(t.text)) {
    value->kind = Value::Kind::kName;
    value->text = std::string(t.text);
    value->span = scanner->SpanOf(t);
    return true;
  }
  if (t.kind == Tok::kEnd) {
    return ValueError(scanner, file, errors, t, fmt::format("expected {} but the line ends", what));
  }
  return ValueError(scanner, file, errors, t,
                    fmt::format("expected {} (a number, a param name or an expression in "
                                "parentheses) but found {}",
                                what, Quote(t)));
}

namespace {

struct Seen {
  Span title, temp;
};

class StatementParser {
 public:
  StatementParser(const LogicalLine& line, NetlistData* data, std::vector<Diagnostic>* errors,
                  Seen* seen)
      : scanner_(line), data_(data), errors_(errors), seen_(seen) {}

  void Parse() {
    const Token first = scanner_.NextWord();
    if (first.kind == Tok::kEnd) return;
    if (first.kind != Tok::kWord) {
      Error(first, fmt::format("expected a statement keyword at the start of the line but "
                               "found {}",
                               Quote(first)));
      return;
    }
    keyword_ = first.text;
    keyword_span_ = scanner_.SpanOf(first);
    bool ok = false;
    if (keyword_ == "title") {
      ok = ParseTitle();
    } else if (keyword_ == "temp") {
      ok = ParseTemp();
    } else if (keyword_ == "param") {
      ok = ParseParam();
    } else if (keyword_ == "part") {
      ok = ParsePart();
    } else if (keyword_ == "resistor") {
      ok = ParseElement(ElementKind::kResistor);
    } else if (keyword_ == "vsource") {
      ok = ParseElement(ElementKind::kVoltageSource);
    } else if (keyword_ == "isource") {
      ok = ParseElement(ElementKind::kCurrentSource);
    } else if (keyword_ == "diode") {
      ok = ParseElement(ElementKind::kDiode);
    } else if (keyword_ == "bias") {
      if (!data_->bias) data_->bias_span = keyword_span_;
      data_->bias = true;
      ok = true;
    } else if (keyword_ == "sweep") {
      ok = ParseSweep();
    } else if (keyword_ == "show") {
      ok = ParseShow();
    } else if (keyword_ == "expect") {
      ok = ParseExpect();
    } else if (keyword_ == "vary") {
      ok = ParseVary();
    } else if (keyword_ == "heatsink") {
      ok = ParseHeatsink();
    } else {
      std::vector<std::string> names(kKeywords.begin(), kKeywords.end());
      const std::string near = SuggestName(first.text, names);
      Error(first,
            fmt::format("unknown keyword '{}'; a statement starts with one of title, temp, "
                        "param, part, resistor, vsource, isource, diode, bias, sweep, show, "
                        "expect, vary, heatsink",
                        first.text),
            near.empty() ? "" : fmt::format("did you mean '{}'?", near));
      return;
    }
    if (ok) ExpectEnd();
  }

 private:
  bool Error(const Span& span, std::string message, std::string hint = "") {
    errors_->push_back(MakeError(data_->file_name, span, std::move(message), std::move(hint)));
    return false;
  }
  bool Error(const Token& t, std::string message, std::string hint = "") {
    if (t.kind == Tok::kError) return Error(scanner_.SpanOf(t), t.error);
    return Error(scanner_.SpanOf(t), std::move(message), std::move(hint));
  }

  void ExpectEnd() {
    const Token t = scanner_.NextWord();
    if (t.kind == Tok::kEnd) return;
    Error(t, fmt::format("unexpected {} at the end of the {} statement", Quote(t), keyword_));
  }

  // A name being defined or referred to; `what` says which ("element name").
  bool TakeName(const char* what, std::string* name, Span* span, bool allow_zero = false) {
    std::string_view text;
    if (!TakeNameText(what, &text, span, allow_zero)) return false;
    *name = std::string(text);
    return true;
  }
  // *text is valid until the next statement.
  bool TakeNameText(const char* what, std::string_view* text, Span* span, bool allow_zero) {
    const Token t = scanner_.NextWord();
    if (t.kind == Tok::kWord && (IsName(t.text) || (allow_zero && t.text == "0"))) {
      if (t.text.size() > kMaxNameLength) {
        return Error(t, fmt::format("name is too long ({} characters); the limit is {}",
                                    t.text.size(), kMaxNameLength));
      }
      *text = t.text;
      *span = scanner_.SpanOf(t);
      return true;
    }
    if (t.kind == Tok::kEnd) {
      return Error(t, fmt::format("expected {} after '{}' but the line ends", what, keyword_));
    }
    if (t.kind == Tok::kWord) {
      return Error(t, fmt::format("expected {} but found {}; a name is a letter or '_' followed "
                                  "by letters, digits or '_'{}",
                                  what, Quote(t),
                                  allow_zero ? " (the reference node is 'gnd' or '0')" : ""));
    }
    return Error(t, fmt::format("expected {} but found {}", what, Quote(t)));
  }

  bool TakeEquals(const std::string& after) {
    const Token t = scanner_.NextWord();
    if (t.kind == Tok::kEquals) return true;
    return Error(t, fmt::format("expected '=' after {} but found {}", after, Quote(t)));
  }

  bool TakeValue(const std::string& what, Value* value) {
    return ParseValue(&scanner_, data_->file_name, what, value, errors_);
  }

  bool ParseTitle() {
    const Token t = scanner_.NextWord();
    if (t.kind != Tok::kString) {
      return Error(t, fmt::format("expected a quoted string after 'title' but found {}", Quote(t)),
                   "write title \"my circuit\"");
    }
    if (data_->title) {
      Error(keyword_span_, "a second 'title' statement; a netlist has at most one");
      errors_->back().notes.push_back(
          {ToLocation(data_->file_name, seen_->title), "the first 'title' is here"});
      return false;
    }
    data_->title = std::string(t.text);
    data_->title_span = scanner_.SpanOf(t);
    seen_->title = keyword_span_;
    return true;
  }

  bool ParseTemp() {
    Value v;
    if (!TakeValue("a temperature in degrees Celsius", &v)) return false;
    if (data_->temp) {
      Error(keyword_span_, "a second 'temp' statement; a netlist has at most one");
      errors_->back().notes.push_back(
          {ToLocation(data_->file_name, seen_->temp), "the first 'temp' is here"});
      return false;
    }
    data_->temp = std::move(v);
    data_->temp_span = keyword_span_;
    seen_->temp = keyword_span_;
    return true;
  }

  bool ParseParam() {
    ParamStmt p;
    if (!TakeName("a param name", &p.name, &p.name_span)) return false;
    if (!TakeEquals(fmt::format("the param name '{}'", p.name))) return false;
    const std::size_t begin = scanner_.offset();
    ExprParser parser(&scanner_, data_->file_name, errors_);
    auto expr = parser.ParseExpression();
    if (!expr) return false;
    const Token rest = scanner_.NextExpr();
    if (rest.kind != Tok::kEnd) {
      return Error(rest, fmt::format("expected an operator or the end of the line after the "
                                     "value of param '{}' but found {}",
                                     p.name, Quote(rest)));
    }
    std::size_t value_begin = begin;
    while (value_begin < scanner_.size() && scanner_.Text(value_begin, value_begin + 1) == " ") {
      ++value_begin;
    }
    std::size_t end = scanner_.size();
    while (end > value_begin &&
           (scanner_.Text(end - 1, end) == " " || scanner_.Text(end - 1, end) == "\t")) {
      --end;
    }
    p.value.kind = Value::Kind::kExpr;
    p.value.expr = std::move(expr);
    p.value.text = std::string(scanner_.Text(value_begin, end));
    p.value.span = scanner_.SpanOf(value_begin, end);
    data_->params.push_back(std::move(p));
    return true;
  }

  bool ParsePart() {
    PartStmt part;
    if (!TakeName("a part name", &part.name, &part.name_span)) return false;
    const Token kind = scanner_.NextWord();
    if (kind.kind != Tok::kWord || kind.text != "diode") {
      std::string hint;
      if (kind.kind == Tok::kWord && !SuggestName(kind.text, {"diode"}).empty()) {
        hint = "did you mean 'diode'?";
      }
      return Error(kind,
                   fmt::format("expected the part kind 'diode' after the part name but found {}",
                               Quote(kind)),
                   hint);
    }
    while (!scanner_.AtEnd()) {
      PartKeyStmt key;
      if (!TakeName("a part key", &key.key, &key.key_span)) return false;
      if (!TakeEquals(fmt::format("the part key '{}'", key.key))) return false;
      if (key.key == "fit") {
        if (!TakeFitFile(key.key_span, &part)) return false;
        continue;
      }
      if (!TakeValue(fmt::format("a value for {}", key.key), &key.value)) return false;
      part.keys.push_back(std::move(key));
    }
    data_->parts.push_back(std::move(part));
    return true;
  }

  // fit="FILE": a quoted file name, once per part.
  bool TakeFitFile(const Span& key_span, PartStmt* part) {
    const Token t = scanner_.NextWord();
    if (t.kind != Tok::kString) {
      return Error(t, fmt::format("expected a quoted file name after fit= but found {}", Quote(t)),
                   "write for example fit=\"rect-iv.csv\"");
    }
    if (part->fit_file) {
      Error(key_span, fmt::format("fit= is given twice in part '{}'", part->name));
      errors_->back().notes.push_back(
          {ToLocation(data_->file_name, part->fit_span), "the first fit= is here"});
      return false;
    }
    if (t.text.empty()) return Error(t, "fit= names no file", "write fit=\"FILE.csv\"");
    part->fit_file = std::string(t.text);
    part->fit_span = key_span;
    return true;
  }

  bool ParseElement(ElementKind kind) {
    const std::string what = ElementKindName(kind);
    // "a resistor name" ...: constant text, so a million elements format no message.
    const char* name_what = kind == ElementKind::kResistor        ? "a resistor name"
                            : kind == ElementKind::kVoltageSource ? "a vsource name"
                            : kind == ElementKind::kCurrentSource ? "a isource name"
                                                                  : "a diode name";
    // Views into the statement's text until the statement is packed at the end.
    std::string_view name, node_a, node_b;
    Span name_span, a_span, b_span;
    if (!TakeNameText(name_what, &name, &name_span, false)) return false;
    if (!TakeNameText("the first node", &node_a, &a_span, true)) return false;
    const Token arrow = scanner_.NextWord();
    if (arrow.kind != Tok::kArrow) {
      return Error(arrow,
                   fmt::format("expected '->' between the two nodes of {} '{}' but "
                               "found {}",
                               what, name, Quote(arrow)),
                   fmt::format("write {} {} {} -> NODE ...", what, name, node_a));
    }
    if (!TakeNameText("the second node", &node_b, &b_span, true)) return false;
    int detail = -1;
    if (kind == ElementKind::kDiode) {
      if (!ParseDiodeRest(name, &detail)) return false;
    } else {
      const char* place = kind == ElementKind::kResistor        ? "a resistance"
                          : kind == ElementKind::kVoltageSource ? "a voltage"
                                                                : "a current";
      Value value;
      if (!TakeValue(place, &value)) return false;
      if (kind == ElementKind::kResistor && !TakeResistorOptions(name)) return false;
      detail = static_cast<int>(data_->element_values.size());
      data_->element_values.push_back(PackValue(std::move(value)));
    }
    ElementStmt e;
    e.kind = kind;
    e.detail = detail;
    e.names = KeepNames(name, node_a, node_b);
    e.name_line = name_span.line;
    e.a_line = a_span.line;
    e.b_line = b_span.line;
    e.name_column = Column(name_span);
    e.a_column = Column(a_span);
    e.b_column = Column(b_span);
    e.name_size = static_cast<std::uint16_t>(name.size());
    e.a_size = static_cast<std::uint16_t>(node_a.size());
    e.b_size = static_cast<std::uint16_t>(node_b.size());
    data_->elements.push_back(e);
    return true;
  }

  // A diode's part and options, after its nodes; *detail is its index in data_->diodes.
  bool ParseDiodeRest(std::string_view name, int* detail) {
    std::string_view part;
    Span part_span;
    if (!TakeNameText("the name of a part", &part, &part_span, false)) return false;
    DiodeOptions options;
    bool sink_given = false;
    while (!scanner_.AtEnd()) {
      const Token option = scanner_.NextWord();
      const bool known = option.kind == Tok::kWord &&
                         (option.text == "area" || option.text == "temp" || option.text == "sink");
      if (!known) {
        std::string hint;
        if (option.kind == Tok::kWord) {
          const std::string near = SuggestName(option.text, {"area", "temp", "sink"});
          if (!near.empty()) hint = fmt::format("did you mean '{}'?", near);
        }
        return Error(option,
                     fmt::format("expected a diode option (area=VALUE, temp=VALUE or "
                                 "sink=HEATSINK) but found {}",
                                 Quote(option)),
                     hint);
      }
      if (option.text == "sink") {
        if (!TakeSink(option, name, &sink_given)) return false;
        continue;
      }
      std::optional<Value>& slot = option.text == "area" ? options.area : options.temp;
      if (slot) {
        return Error(option,
                     fmt::format("option '{}' given twice for diode '{}'", option.text, name));
      }
      if (!TakeEquals(fmt::format("'{}'", option.text))) return false;
      Value v;
      if (!TakeValue(option.text == "area" ? "an area factor" : "a temperature", &v)) {
        return false;
      }
      slot = std::move(v);
    }
    DiodeStmt diode;
    diode.part = data_->text.Keep(part).data();
    diode.part_line = part_span.line;
    diode.part_column = Column(part_span);
    diode.part_size = static_cast<std::uint16_t>(part.size());
    if (options.area || options.temp) {
      diode.options = static_cast<int>(data_->diode_options.size());
      data_->diode_options.push_back(std::move(options));
    }
    *detail = static_cast<int>(data_->diodes.size());
    data_->diodes.push_back(diode);
    return true;
  }

  // An element's three names back to back in the text store (ElementStmt::names).
  const char* KeepNames(std::string_view name, std::string_view node_a, std::string_view node_b) {
    static_assert(3 * kMaxNameLength <= 65535, "a name's size fits ElementStmt's 16 bits");
    char joined[3 * kMaxNameLength];
    std::copy(name.begin(), name.end(), joined);
    std::copy(node_a.begin(), node_a.end(), joined + name.size());
    std::copy(node_b.begin(), node_b.end(), joined + name.size() + node_a.size());
    return data_->text.Keep(std::string_view(joined, name.size() + node_a.size() + node_b.size()))
        .data();
  }

  // A column of a word on one physical line, which has at most kMaxLineBytes characters.
  static std::uint16_t Column(const Span& span) {
    static_assert(kMaxLineBytes < 65535, "a column fits 16 bits");
    return static_cast<std::uint16_t>(span.column);
  }

  // The packed form of an element's value (ElementValue): a literal or a name keeps its
  // text and place; an expression is kept whole.
  ElementValue PackValue(Value value) {
    ElementValue packed;
    packed.kind = value.kind;
    if (value.kind == Value::Kind::kExpr) {
      packed.expr = static_cast<int>(data_->element_exprs.size());
      data_->element_exprs.push_back(std::move(value));
      return packed;
    }
    packed.text = data_->text.Keep(value.text).data();
    packed.size = static_cast<std::uint16_t>(value.text.size());
    packed.line = value.span.line;
    packed.column = Column(value.span);
    return packed;
  }

  // `sink=NAME` on a diode, at most once; the name is resolved by Elaborate.
  bool TakeSink(const Token& option, std::string_view element, bool* given) {
    if (*given) {
      return Error(option, fmt::format("option 'sink' given twice for diode '{}'", element));
    }
    *given = true;
    SinkMountStmt mount;
    mount.element = static_cast<int>(data_->elements.size());
    mount.key_span = scanner_.SpanOf(option);
    if (!TakeEquals("'sink'")) return false;
    if (!TakeName("the name of a heatsink", &mount.sink, &mount.sink_span)) return false;
    data_->sink_mounts.push_back(std::move(mount));
    return true;
  }

  // heatsink NAME thermal_res=VALUE
  bool ParseHeatsink() {
    HeatsinkStmt sink;
    if (!TakeName("a heatsink name", &sink.name, &sink.name_span)) return false;
    const Token key = scanner_.NextWord();
    if (key.kind != Tok::kWord || key.text != "thermal_res") {
      std::string hint =
          fmt::format("write heatsink {} thermal_res=VALUE (K/W, sink to ambient)", sink.name);
      if (key.kind == Tok::kEnd) {
        return Error(
            key, fmt::format("heatsink '{}' needs thermal_res=VALUE but the line ends", sink.name),
            hint);
      }
      return Error(key,
                   fmt::format("expected thermal_res=VALUE after the heatsink name but "
                               "found {}",
                               Quote(key)),
                   hint);
    }
    sink.key_span = scanner_.SpanOf(key);
    if (!TakeEquals("'thermal_res'")) return false;
    if (!TakeValue("a thermal resistance in K/W", &sink.thermal_res)) return false;
    data_->heatsinks.push_back(std::move(sink));
    return true;
  }

  // `max_power=VALUE` after a resistor's value, at most once.
  bool TakeResistorOptions(std::string_view element) {
    bool seen = false;
    while (!scanner_.AtEnd()) {
      const Token option = scanner_.NextWord();
      if (option.kind != Tok::kWord || option.text != "max_power") {
        if (option.kind == Tok::kWord && !SuggestName(option.text, {"max_power"}).empty()) {
          return Error(option,
                       fmt::format("expected a resistor rating (max_power=VALUE) or the end of "
                                   "the line but found {}",
                                   Quote(option)),
                       "did you mean 'max_power'?");
        }
        return Error(
            option,
            fmt::format("unexpected {} at the end of the resistor statement", Quote(option)),
            "after its value a resistor takes only a rating, max_power=VALUE");
      }
      if (seen) {
        return Error(option,
                     fmt::format("option 'max_power' given twice for resistor '{}'", element));
      }
      seen = true;
      ResistorRatingStmt rating;
      rating.element = static_cast<int>(data_->elements.size());
      rating.key_span = scanner_.SpanOf(option);
      if (!TakeEquals("'max_power'")) return false;
      if (!TakeValue("a rated dissipation", &rating.value)) return false;
      data_->resistor_ratings.push_back(std::move(rating));
    }
    return true;
  }

  bool ParseSweep() {
    SweepStmt sweep;
    sweep.keyword_span = keyword_span_;
    while (!scanner_.AtEnd()) {
      SweepPairStmt pair;
      const Token target = scanner_.NextWord();
      if (target.kind != Tok::kWord) {
        return Error(target, fmt::format("expected a sweep target (an element, a param, "
                                         "PART.key or temp) but found {}",
                                         Quote(target)));
      }
      pair.target = std::string(target.text);
      pair.target_span = scanner_.SpanOf(target);
      const Token range = scanner_.NextWord();
      if (range.kind != Tok::kWord) {
        return Error(
            range,
            fmt::format("expected a range after the sweep target '{}' but found {}", target.text,
                        Quote(range)),
            fmt::format("write {} A..B:STEP, A..B:decN, A..B:Npts or V1,V2,...", target.text));
      }
      pair.range = std::string(range.text);
      pair.range_span = scanner_.SpanOf(range);
      sweep.pairs.push_back(std::move(pair));
    }
    if (sweep.pairs.empty()) {
      return Error(scanner_.SpanOf(scanner_.size(), scanner_.size()),
                   "expected a sweep target and a range after 'sweep' but the line ends",
                   "write sweep TARGET A..B:STEP");
    }
    data_->sweeps.push_back(std::move(sweep));
    return true;
  }

  // A quantity: a word (pin.v) or a parenthesised expression, checked for syntax here
  // and resolved by ParseQuantity during elaboration.
  bool TakeQuantity(QuantityText* q) {
    const Token t = scanner_.NextWord();
    if (t.kind == Tok::kWord) {
      q->text = std::string(t.text);
      q->span = scanner_.SpanOf(t);
      return true;
    }
    if (t.kind == Tok::kLParen) {
      ExprParser parser(&scanner_, data_->file_name, errors_);
      if (!parser.ParseParenthesized(t)) return false;
      q->text = std::string(scanner_.Text(t.begin, scanner_.offset()));
      q->span = scanner_.SpanOf(t.begin, scanner_.offset());
      return true;
    }
    return Error(t, fmt::format("expected a quantity (such as pin.v, R1.i or (a.v - b.v)) but "
                                "found {}",
                                Quote(t)));
  }

  bool ParseShow() {
    std::vector<QuantityText> list;
    while (!scanner_.AtEnd()) {
      QuantityText q;
      if (!TakeQuantity(&q)) return false;
      list.push_back(std::move(q));
    }
    if (list.empty()) {
      return Error(scanner_.SpanOf(scanner_.size(), scanner_.size()),
                   "expected at least one quantity after 'show' but the line ends");
    }
    for (auto& q : list) data_->show.push_back(std::move(q));
    return true;
  }

  // '=', '<=' or '>=' after the quantity of an expect statement.
  bool TakeRelation(const QuantityText& q, ExpectStmt* e) {
    const Token t = scanner_.NextWord();
    if (t.kind == Tok::kEquals) {
      e->relation_span = scanner_.SpanOf(t);
      return true;
    }
    if (t.kind == Tok::kWord && (t.text == "<" || t.text == ">")) {
      const Token eq = scanner_.PeekWord();
      if (eq.kind == Tok::kEquals && eq.begin == t.end) {
        scanner_.NextWord();
        e->relation =
            t.text == "<" ? Expectation::Relation::kAtMost : Expectation::Relation::kAtLeast;
        e->relation_span = scanner_.SpanOf(t.begin, eq.end);
        return true;
      }
    }
    return Error(t,
                 fmt::format("expected '=', '<=' or '>=' after the quantity '{}' but found {}",
                             q.text, Quote(t)),
                 fmt::format("write expect {} = VALUE, expect {} <= VALUE or expect {} >= VALUE",
                             q.text, q.text, q.text));
  }

  bool ParseExpect() {
    ExpectStmt e;
    if (!TakeQuantity(&e.quantity)) return false;
    if (!TakeRelation(e.quantity, &e)) return false;
    if (!TakeValue(e.relation == Expectation::Relation::kEqual ? "the expected value" : "a bound",
                   &e.value)) {
      return false;
    }
    if (!scanner_.AtEnd() && e.relation != Expectation::Relation::kEqual) {
      const Token t = scanner_.NextWord();
      if (t.kind == Tok::kWord && t.text == "within") {
        return Error(t, "a bound (<= or >=) takes no tolerance: it holds or it does not",
                     "write the bound with its margin, e.g. expect pin.v <= 3.6");
      }
      return Error(t, fmt::format("unexpected {} at the end of the expect statement", Quote(t)));
    }
    if (!scanner_.AtEnd()) {
      const Token within = scanner_.PeekWord();
      if (within.kind != Tok::kWord || within.text != "within") {
        scanner_.NextWord();
        return Error(within, fmt::format("expected 'within TOLERANCE' or the end of the line "
                                         "but found {}",
                                         Quote(within)));
      }
      scanner_.NextWord();
      Value tol;
      if (!TakeValue("a tolerance (such as 50m or 5%)", &tol)) return false;
      if (tol.kind != Value::Kind::kLiteral) {
        return Error(tol.span, "a tolerance must be a number, such as 50m or 5%");
      }
      e.tolerance = std::move(tol);
    }
    data_->expects.push_back(std::move(e));
    return true;
  }

  // vary TARGET SPREAD [uniform|normal] [each], the options in any order, once each.
  bool ParseVary() {
    VaryStmt v;
    const Token target = scanner_.NextWord();
    if (target.kind != Tok::kWord) {
      return Error(target,
                   fmt::format("expected a vary target (an element, a param, PART.key or temp) "
                               "but found {}",
                               Quote(target)),
                   "write for example vary R1 ±1%");
    }
    v.target = std::string(target.text);
    v.target_span = scanner_.SpanOf(target);
    const Token spread = scanner_.NextWord();
    if (spread.kind != Tok::kWord) {
      return Error(spread,
                   fmt::format("expected a spread after the vary target '{}' but found {}",
                               target.text, Quote(spread)),
                   fmt::format("write {} ±TOL, {} +-TOL, {} A..B or {} xF", target.text,
                               target.text, target.text, target.text));
    }
    v.spread = std::string(spread.text);
    v.spread_span = scanner_.SpanOf(spread);
    bool have_distribution = false;
    while (!scanner_.AtEnd()) {
      const Token t = scanner_.NextWord();
      const bool distribution = t.kind == Tok::kWord && (t.text == "uniform" || t.text == "normal");
      const bool each = t.kind == Tok::kWord && t.text == "each";
      if ((distribution && have_distribution) || (each && v.each)) {
        return Error(t, fmt::format("'{}' is given twice; a vary line takes one distribution "
                                    "(uniform or normal) and 'each' at most once",
                                    t.text));
      }
      if (distribution) {
        have_distribution = true;
        v.distribution =
            t.text == "normal" ? VaryLine::Distribution::kNormal : VaryLine::Distribution::kUniform;
        v.distribution_span = scanner_.SpanOf(t);
      } else if (each) {
        v.each = true;
        v.each_span = scanner_.SpanOf(t);
      } else {
        const std::vector<std::string> options = {"uniform", "normal", "each"};
        const std::string near =
            t.kind == Tok::kWord ? SuggestName(t.text, options) : std::string();
        return Error(t,
                     fmt::format("expected 'uniform', 'normal' or 'each' after the spread but "
                                 "found {}",
                                 Quote(t)),
                     near.empty() ? "" : fmt::format("did you mean '{}'?", near));
      }
    }
    data_->varies.push_back(std::move(v));
    return true;
  }

  Scanner scanner_;
  NetlistData* data_;
  std::vector<Diagnostic>* errors_;
  Seen* seen_;
  std::string_view keyword_;
  Span keyword_span_;
};

}  // namespace

std::string_view TextStore::Keep(std::string_view text) {
  if (text.empty()) return {};
  if (text.size() > kBlockBytes - used_) {
    blocks_.push_back(std::make_unique_for_overwrite<char[]>(std::max(kBlockBytes, text.size())));
    used_ = 0;
  }
  char* at = blocks_.back().get() + used_;
  std::copy(text.begin(), text.end(), at);
  used_ += text.size();
  return std::string_view(at, text.size());
}

Value NetlistData::ValueOf(const ElementStmt& e) const {
  const ElementValue& packed = element_values[static_cast<std::size_t>(e.detail)];
  if (packed.kind == Value::Kind::kExpr) {
    return element_exprs[static_cast<std::size_t>(packed.expr)];
  }
  // What ParseValue made of this word: the same text on one line gives the same spans
  // (a column per character) and, parsed again, the same number and unit.
  const std::string_view word(packed.text, packed.size);
  Value value;
  value.kind = packed.kind;
  value.text = std::string(word);
  value.span = Span{packed.line, packed.column, CountChars(word)};
  if (packed.kind == Value::Kind::kLiteral) {
    NumberLiteral literal;
    NumberError error;
    ParseNumber(word, &literal, &error);  // parsed once already without error
    value.number = literal.value;
    value.unit = literal.unit;
    const std::string_view unit = word.substr(literal.unit_offset);
    value.unit_span =
        Span{packed.line, packed.column + CountChars(word.substr(0, literal.unit_offset)),
             std::max(1, CountChars(unit))};
  }
  return value;
}

const std::string& Netlist::file_name() const { return data_->file_name; }

Result<Netlist> ParseNetlist(std::string_view text, const std::string& file_name) {
  auto data = std::make_shared<NetlistData>();
  data->file_name = file_name;
  // At most one element per line: reserving once avoids moving every statement parsed so
  // far each time the vector grows, and the old and new arrays living side by side (for
  // a million elements, over a gigabyte). Pages never written are never made resident.
  const auto lines = static_cast<std::size_t>(std::count(text.begin(), text.end(), '\n')) + 1;
  data->elements.reserve(lines);
  data->element_values.reserve(lines);
  data->diodes.reserve(lines);
  std::vector<Diagnostic> errors;
  std::vector<LexProblem> problems;
  LineReader reader(text);
  LogicalLine line;
  Seen seen;
  const auto limit = static_cast<std::size_t>(kMaxDiagnostics);
  while (errors.size() < limit && reader.Next(&line, &problems)) {
    for (LexProblem& p : problems) {
      errors.push_back(MakeError(file_name, p.span, std::move(p.message)));
    }
    problems.clear();
    if (line.text.empty()) continue;
    StatementParser parser(line, data.get(), &errors, &seen);
    parser.Parse();
  }
  if (!errors.empty()) {
    if (errors.size() > limit) errors.resize(limit);
    return errors;
  }
  return Netlist(std::move(data));
}

}  // namespace knee
