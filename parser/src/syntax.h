// The parsed statements of a netlist (internal to the parser): what ParseNetlist
// produces and Elaborate consumes. Values stay unevaluated here.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "knee/circuit.h"
#include "knee/netlist.h"
#include "knee/result.h"

namespace knee {

// A place in the text without the file name (kept once in NetlistData). Line 0 means
// "no place" (command-line text); its location keeps only the file (or option) name.
struct Span {
  int line = 0;
  int column = 0;
  int length = 1;
};

inline SourceLocation ToLocation(const FileName& file, const Span& span) {
  if (span.line == 0) return SourceLocation{file, 0, 0, 1};
  return SourceLocation{file, span.line, span.column, span.length};
}
inline Span ToSpan(const SourceLocation& where) {
  return Span{where.line, where.column, where.length};
}

// An expression tree (netlist-format.md, "Expressions").
struct Expr {
  enum class Kind { kNumber, kName, kNegate, kAdd, kSub, kMul, kDiv, kPow, kCall };
  Kind kind = Kind::kNumber;
  double number = 0;  // kNumber, SI prefix and % applied
  std::string unit;   // kNumber: the unit as written ("" if none)
  std::string name;   // kName: param or quantity name ("pin.v"); kCall: function name
  std::vector<std::unique_ptr<Expr>> args;  // operands or call arguments
  Span span;       // the token (operator, name, literal) this node stands for
  int height = 1;  // levels of the tree below and including this node
};
using ExprPtr = std::shared_ptr<const Expr>;

// A value as written at a value place: a literal, a param name or (expr).
struct Value {
  enum class Kind { kLiteral, kName, kExpr };
  Kind kind = Kind::kLiteral;
  double number = 0;      // kLiteral
  std::string_view unit;  // kLiteral: canonical unit ("" if none), static storage
  std::string text;       // as written (the literal, the name, or the parenthesised text)
  ExprPtr expr;           // kExpr
  Span span;              // the whole value
  Span unit_span;         // kLiteral: the prefix/unit letters (or the whole literal)
};

struct ParamStmt {
  std::string name;
  Span name_span;
  Value value;  // always kExpr or kLiteral/kName parsed in expression mode
};

struct PartKeyStmt {
  std::string key;
  Span key_span;
  Value value;
};

struct PartStmt {
  std::string name;
  Span name_span;
  std::vector<PartKeyStmt> keys;
  // fit="FILE" (netlist-format.md, "Parts from data"): the data file as written, and the
  // place of the word 'fit' (a failed fit is reported there).
  std::optional<std::string> fit_file;
  Span fit_span;
};

// An element statement, packed (40 bytes): a netlist of a million elements keeps all its
// statements alive through elaboration. What only some kinds have lives in side arrays
// of NetlistData (a value for R, V and I; a part and options for diodes), so that a diode
// carries no value and a resistor no part. The three names lie back to back in
// NetlistData::text: one pointer and three sizes (three std::string_views and three Spans
// took 104 bytes). A name's place is its line and first column; its length is its size (a
// name is ASCII, at most kMaxNameLength bytes, and no token crosses a line break: a
// continuation '\\' becomes a blank), and a column fits 16 bits (a physical line has at
// most kMaxLineBytes bytes).
struct ElementStmt {
  const char* names = nullptr;  // name, node_a, node_b, in NetlistData::text
  int name_line = 0, a_line = 0, b_line = 0;
  std::uint16_t name_column = 0, a_column = 0, b_column = 0;
  std::uint16_t name_size = 0, a_size = 0, b_size = 0;
  ElementKind kind = ElementKind::kResistor;
  int detail = -1;  // index into NetlistData::element_values (R, V, I) or ::diodes

  std::string_view name() const { return {names, name_size}; }
  std::string_view node_a() const { return {names + name_size, a_size}; }
  std::string_view node_b() const { return {names + name_size + a_size, b_size}; }
  Span name_span() const { return {name_line, name_column, name_size}; }
  Span a_span() const { return {a_line, a_column, a_size}; }
  Span b_span() const { return {b_line, b_column, b_size}; }
};

// The value of a resistor or a source, packed (24 bytes instead of a 96-byte Value): a
// literal or a param name is its text (in NetlistData::text) and its place, and becomes a
// Value again on reading (NetlistData::ValueOf parses the literal anew, which gives the
// same number, unit and unit place); an expression is kept whole in
// NetlistData::element_exprs.
struct ElementValue {
  const char* text = nullptr;  // kLiteral, kName
  int line = 0;
  std::uint16_t column = 0;
  std::uint16_t size = 0;  // bytes of text; a word lies on one physical line
  int expr = -1;           // kExpr: index into NetlistData::element_exprs
  Value::Kind kind = Value::Kind::kLiteral;
};

// A diode's area= and temp=, which most diodes do not have.
struct DiodeOptions {
  std::optional<Value> area;
  std::optional<Value> temp;
};

// What a diode statement has beyond ElementStmt (24 bytes; 48 with a std::string_view,
// a Span and two pointers to options).
struct DiodeStmt {
  const char* part = nullptr;  // the part's name, in NetlistData::text
  int part_line = 0;
  std::uint16_t part_column = 0;
  std::uint16_t part_size = 0;
  int options = -1;  // index into NetlistData::diode_options, or -1 for none

  std::string_view part_name() const { return {part, part_size}; }
  Span part_span() const { return {part_line, part_column, part_size}; }
};

// A resistor's rating (netlist-format.md, "Resistor ratings"): `max_power=VALUE`.
struct ResistorRatingStmt {
  int element = -1;  // index into NetlistData::elements
  Span key_span;
  Value value;
};

// `heatsink NAME thermal_res=VALUE` (netlist-format.md, "Self-heating").
struct HeatsinkStmt {
  std::string name;
  Span name_span;
  Span key_span;  // the word thermal_res
  Value thermal_res;
};

// `sink=NAME` on a diode: the diode is mounted on that heatsink.
struct SinkMountStmt {
  int element = -1;  // index into NetlistData::elements, a diode
  std::string sink;
  Span sink_span;
  Span key_span;  // the word sink
};

struct SweepPairStmt {
  std::string target;
  Span target_span;
  std::string range;
  Span range_span;
};

struct SweepStmt {
  Span keyword_span;
  std::vector<SweepPairStmt> pairs;
};

struct QuantityText {
  std::string text;
  Span span;
};

struct ExpectStmt {
  QuantityText quantity;
  Expectation::Relation relation = Expectation::Relation::kEqual;
  Span relation_span;
  // The expected value, or for a bound (<=, >=) its right side: a literal, a param name
  // or a parenthesised expression (which may read quantities: (rail.v + 0.5)).
  Value value;
  std::optional<Value> tolerance;  // kLiteral only; equality only
};

// vary TARGET SPREAD [uniform|normal] [each] (netlist-format.md, "Spread: vary"). The
// spread stays text here: its unit depends on the target, resolved during elaboration.
struct VaryStmt {
  std::string target;
  Span target_span;
  std::string spread;
  Span spread_span;
  VaryLine::Distribution distribution = VaryLine::Distribution::kUniform;
  Span distribution_span;  // line 0 when not written
  bool each = false;
  Span each_span;
};

// Storage for the text of names in statements: appended to blocks that never move, so a
// std::string_view into it stays valid while the NetlistData lives. One allocation per
// block, not one per name.
class TextStore {
 public:
  std::string_view Keep(std::string_view text);

 private:
  static constexpr std::size_t kBlockBytes = std::size_t{1} << 16;
  std::vector<std::unique_ptr<char[]>> blocks_;
  std::size_t used_ = kBlockBytes;  // bytes used in blocks_.back()
};

struct NetlistData {
  FileName file_name;
  TextStore text;  // the names of element statements
  std::optional<std::string> title;
  Span title_span;
  std::optional<Value> temp;
  Span temp_span;
  std::vector<ParamStmt> params;
  std::vector<PartStmt> parts;
  std::vector<ElementStmt> elements;
  std::vector<ElementValue> element_values;          // of resistors and sources, by ::detail
  std::vector<Value> element_exprs;                  // by ElementValue::expr
  std::vector<DiodeStmt> diodes;                     // by ElementStmt::detail
  std::vector<DiodeOptions> diode_options;           // by DiodeStmt::options
  std::vector<ResistorRatingStmt> resistor_ratings;  // in file order
  std::vector<HeatsinkStmt> heatsinks;               // in file order
  std::vector<SinkMountStmt> sink_mounts;            // in file order

  // The value of a resistor or source statement, as ParseValue made it.
  Value ValueOf(const ElementStmt& e) const;
  const DiodeStmt& DiodeOf(const ElementStmt& e) const {
    return diodes[static_cast<std::size_t>(e.detail)];
  }
  // A diode's options; none (both empty) when it has no area= nor temp=.
  const DiodeOptions& OptionsOf(const DiodeStmt& d) const {
    static const DiodeOptions kNone;
    return d.options < 0 ? kNone : diode_options[static_cast<std::size_t>(d.options)];
  }
  bool bias = false;
  Span bias_span;
  std::vector<SweepStmt> sweeps;
  std::vector<QuantityText> show;
  std::vector<ExpectStmt> expects;
  std::vector<VaryStmt> varies;
};

}  // namespace knee
