// The parsed statements of a netlist (internal to the parser): what ParseNetlist
// produces and Elaborate consumes. Values stay unevaluated here.
#pragma once

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

// An element statement. What only some kinds have lives in side arrays of NetlistData (a
// value for R, V and I; a part and options for diodes), so that a diode carries no empty
// Value and a resistor no part: a netlist of a million elements keeps all its statements
// alive through elaboration. Names are views into NetlistData::text (a std::string would
// be 32 bytes per name).
struct ElementStmt {
  std::string_view name;
  std::string_view node_a, node_b;
  Span name_span;
  Span a_span, b_span;
  int detail = -1;  // index into NetlistData::element_values (R, V, I) or ::diodes
  ElementKind kind = ElementKind::kResistor;
};

// What a diode statement has beyond ElementStmt.
struct DiodeStmt {
  std::string_view part;  // a view into NetlistData::text
  Span part_span;
  // Options, by pointer: most diodes have none, and an empty std::optional<Value> would
  // still take the size of a Value.
  std::unique_ptr<Value> area;
  std::unique_ptr<Value> temp;
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
  std::vector<Value> element_values;  // of resistors and sources, by ElementStmt::detail
  std::vector<DiodeStmt> diodes;      // by ElementStmt::detail
  std::vector<ResistorRatingStmt> resistor_ratings;  // in file order
  std::vector<HeatsinkStmt> heatsinks;               // in file order
  std::vector<SinkMountStmt> sink_mounts;            // in file order

  const Value& ValueOf(const ElementStmt& e) const {
    return element_values[static_cast<std::size_t>(e.detail)];
  }
  const DiodeStmt& DiodeOf(const ElementStmt& e) const {
    return diodes[static_cast<std::size_t>(e.detail)];
  }
  bool bias = false;
  Span bias_span;
  std::vector<SweepStmt> sweeps;
  std::vector<QuantityText> show;
  std::vector<ExpectStmt> expects;
  std::vector<VaryStmt> varies;
};

}  // namespace knee
