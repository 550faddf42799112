// From .knee text to an elaborated Design (netlist-format.md). Two stages:
//   ParseNetlist: lexing and syntax; values stay expressions.
//   Elaborate:    params, parts and values evaluated (with --set/--temp overrides),
//                 names resolved, units checked, requests resolved.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "knee/circuit.h"
#include "knee/quantity.h"
#include "knee/result.h"
#include "knee/sensitivity.h"
#include "knee/solver.h"

namespace knee {

// The parsed statements. Opaque to callers; defined in parser/src.
struct NetlistData;
class Netlist {
 public:
  explicit Netlist(std::shared_ptr<const NetlistData> data) : data_(std::move(data)) {}
  const NetlistData& data() const { return *data_; }
  const std::string& file_name() const;

 private:
  std::shared_ptr<const NetlistData> data_;
};

// Reports every syntax error found (up to kMaxDiagnostics), not only the first.
inline constexpr int kMaxDiagnostics = 20;
Result<Netlist> ParseNetlist(std::string_view text, const std::string& file_name);

// Command-line overrides, applied after the file is read and before expressions that
// use the name are evaluated.
struct Override {
  std::string name;        // param, element, or PART.key
  std::string value_text;  // a value as in the netlist: literal, param name or (expr)
};
struct Overrides {
  std::vector<Override> sets;
  std::optional<double> temp;  // degC, replaces the file's temp statement
};

// The netlist's params, evaluated (name, value), in file order.
using ParamValues = std::vector<std::pair<std::string, double>>;

// A quantity or an expression of quantities, resolved against a circuit. An expression may
// also read params and `temp` (the ambient, degC): its variables, each with the nominal
// value it had when the expression was parsed.
class QuantityExpr {
 public:
  struct Node;  // defined in parser/src
  QuantityExpr(std::string text, std::string unit, std::shared_ptr<const Node> root,
               std::vector<std::string> variables = {}, std::vector<double> nominal = {});
  // With every variable at its nominal value.
  double Evaluate(const Solution& solution) const;
  // With the variables at `values` (one per variables(), in that order): a sweep of temp or
  // of a param passes the point's values.
  double Evaluate(const Solution& solution, const std::vector<double>& values) const;
  // The params and "temp" the expression reads, and their nominal values.
  const std::vector<std::string>& variables() const { return variables_; }
  const std::vector<double>& nominal() const { return nominal_; }
  const std::string& text() const { return text_; }  // as written: "pin.v", "(a.v - b.v)"
  const std::string& unit() const { return unit_; }  // "V", "A", "W", "Ohm", "" if mixed
  // The plain quantities this expression reads.
  const std::vector<QuantityRef>& refs() const { return refs_; }
  // d(expression)/d(refs()[k]) at `solution`, one per entry of refs() (for an adjoint
  // right-hand side: knee/sensitivity.h, WeightedQuantity). NaN outside the domain.
  std::vector<double> Partials(const Solution& solution) const;

 private:
  std::string text_;
  std::string unit_;
  std::shared_ptr<const Node> root_;
  std::vector<QuantityRef> refs_;
  std::vector<std::string> variables_;
  std::vector<double> nominal_;
};

// `params` (may be null: no params) are the names an expression may use beside quantities
// and `temp` (netlist-format.md, "Quantities in expressions").
Result<QuantityExpr> ParseQuantity(std::string_view text, const Circuit& circuit,
                                   const SourceLocation& where,
                                   const ParamValues* params = nullptr);
// A plain quantity (no expression) straight from its reference, without a name look-up:
// for the default report of every node voltage and element current of a large circuit.
QuantityExpr PlainQuantity(const Circuit& circuit, const QuantityRef& ref);

// Sweep targets and ranges (netlist-format.md, "Sweep ranges").
struct SweepTarget {
  enum class Kind { kElement, kParam, kPartKey, kTemp };
  Kind kind = Kind::kTemp;
  std::string name;  // as written: "Vline", "Rprot", "SIG.sat_current", "temp"
  int index = -1;    // element or part index
  std::string key;   // part key for kPartKey
};
struct SweepAxis {
  SweepTarget target;
  std::vector<double> values;
  bool logarithmic = false;
  std::string range_text;
  SourceLocation where;
};
Result<std::vector<double>> ExpandRange(std::string_view text, const SourceLocation& where,
                                        bool* logarithmic);
Result<SweepTarget> ResolveSweepTarget(std::string_view name, const Netlist& netlist,
                                       const Circuit& circuit, const SourceLocation& where);
// Most values the sweep ranges of one netlist hold together (all its sweep statements),
// and likewise those of one command line: each range alone may have 10,000,000 points, and
// this keeps the values held before any point is solved to about 80 MB.
inline constexpr long long kMaxSweepValues = 10'000'000;

// ResolveSweepTarget and ExpandRange together, with the range's units checked against
// the target (ohms for a resistor, degrees Celsius or kelvin for temp, the key's unit for
// PART.key). ExpandRange alone accepts any unit and converts none.
Result<SweepAxis> ResolveSweepAxis(std::string_view target, std::string_view range,
                                   const Netlist& netlist, const Circuit& circuit,
                                   const SourceLocation& target_where,
                                   const SourceLocation& range_where);

// Unit of a sweep target's values ("V", "Ohm", "A", "C", a part key's unit, or "").
std::string SweepTargetUnit(const SweepTarget& target, const Circuit& circuit);
// Sets the target to `value` in `circuit` under the netlist's rules for that place;
// "" or a message naming the rule broken. Param targets are applied by re-elaborating
// with an override, not here: returns "".
std::string ApplySweepValue(const SweepTarget& target, double value, Circuit* circuit);

struct Expectation {
  // kEqual: a hand value checked at the bias point (`expect Q = VALUE [within TOL]`).
  // kAtMost / kAtLeast: a bound (`expect Q <= VALUE`, `>=`) that must hold at every point
  // of every analysis the file runs and in every sample of a spread.
  enum class Relation { kEqual, kAtMost, kAtLeast };
  QuantityExpr quantity;
  double expected = 0;
  double tolerance = 0.05;  // absolute in the quantity's unit, or relative
  bool relative = true;
  SourceLocation where;
  Relation relation = Relation::kEqual;
  // A bound whose right side reads quantities ((rail.v + 0.5)): evaluated at each point.
  // Empty for a constant bound, which is `expected`.
  std::optional<QuantityExpr> bound;

  bool is_bound() const { return relation != Relation::kEqual; }
  // The bound's value at a solution (`expected` when it is a constant).
  double BoundAt(const Solution& solution) const {
    return bound ? bound->Evaluate(solution) : expected;
  }
  // Whether a bound holds for `actual` against `limit` (false for NaN).
  bool BoundHolds(double actual, double limit) const {
    return relation == Relation::kAtMost ? actual <= limit : actual >= limit;
  }
};

// One `vary` line, resolved against the elaborated circuit (netlist-format.md, "Spread:
// vary"; docs/spread.md). This is the public list that `knee spread` samples and
// `knee sensitivity` weighs: Design::varies, in file order.
//
// Every line draws a value of its target between `low` and `high`:
//   kTolerance (±TOL, +-TOL, TOL absolute or in % of the nominal): [nominal-tol, nominal+tol];
//   kRange (A..B): [A, B], which need not contain the nominal (then `note` says so);
//   kFactor (xF): [nominal/F, nominal*F], drawn on a log scale.
// kUniform is uniform between the limits (in log for kFactor); kNormal is a normal with
// its mean at the middle of the limits (the geometric middle for kFactor) and sigma a
// sixth of their span (TOL/3), cut at the limits.
// Without `each` one draw per sample is shared by every use of the target (a lot); with
// `each` (PART.key targets only) every diode of the part draws its own (the devices).
// Two lines on one PART.key, one shared and one `each`, multiply: the value of a diode
// is nominal * (shared draw / nominal) * (its own draw / nominal).
struct VaryLine {
  enum class Form { kTolerance, kRange, kFactor };
  enum class Distribution { kUniform, kNormal };
  SweepTarget target;
  Form form = Form::kTolerance;
  Distribution distribution = Distribution::kUniform;
  bool each = false;
  double nominal = 0;  // the target's value in the elaborated circuit (after --set, --temp)
  double low = 0;      // limits of the drawn value, low <= high, in the target's unit
  double high = 0;
  double factor = 1;        // kFactor: F
  std::string spread_text;  // as written: "±1%", "20..28", "x3"
  SourceLocation where;     // the target in the vary statement
  SourceLocation spread_where;
  // "" or why the line is valid but probably not meant (a range that excludes the
  // nominal); printed as a warning by the commands that use vary lines.
  std::string note;
};

// How far a param reaches into the circuit: for every number of the circuit whose value
// uses it (directly, or through other params), d(number)/d(param), the param perturbed at
// its own definition with every param that names it following (docs/sensitivity.md).
struct ParamReach {
  SensitivityTarget target;
  double slope = 0.0;
};
struct ParamInfo {
  std::string name;
  double value = 0.0;
  SourceLocation where;
  std::vector<ParamReach> reach;  // empty: no number of the circuit uses the param
};

struct Design {
  Circuit circuit;
  std::vector<ParamInfo> param_info;           // in the file's order, with where each param reaches
  bool bias_requested = false;                 // 'bias' present, or no request at all
  std::vector<std::vector<SweepAxis>> sweeps;  // one per 'sweep' statement
  std::vector<QuantityExpr> show;              // empty: every node v and element i
  std::vector<Expectation> expects;
  ParamValues params;  // every param that evaluated, for expressions of show and expect
  // A valid netlist that is probably not what was meant (docs/errors.md, "Warnings"):
  // a node touched by one element only, a node named like gnd in other capitals, a
  // tolerance that is a bare number.
  std::vector<Diagnostic> warnings;
  std::vector<VaryLine> varies;  // ignored by every analysis but spread and sensitivity
};

Result<Design> Elaborate(const Netlist& netlist, const Overrides& overrides);

// A command-line expectation "QUANTITY=VALUE[~TOL]" (docs/cli.md, --expect): the quantity
// as in 'show', VALUE a number literal of netlist-format.md whose unit must fit the
// quantity, TOL absolute ("50m", "20mV") or relative ("5%"), default 5 % relative.
// Errors are located at `where` (the option).
Result<Expectation> ParseExpectOption(std::string_view text, const Circuit& circuit,
                                      const SourceLocation& where,
                                      const ParamValues* params = nullptr);
// One number literal of netlist-format.md ("650m", "4R7", "1mA") at a place whose unit is
// `unit` ("V", "A", "Ohm"; the unit may be omitted); `what` names the place in errors.
Result<double> ParseNumberText(std::string_view text, std::string_view unit, std::string_view what,
                               const SourceLocation& where);
// Only the circuit values (no requests), for sweeps over a param: the topology is the
// same as Elaborate's for any values of the params.
Result<Circuit> ElaborateCircuit(const Netlist& netlist, const Overrides& overrides);
// Only the params, with the overrides applied (a sweep point of a param sweep).
Result<ParamValues> ElaborateParams(const Netlist& netlist, const Overrides& overrides);

}  // namespace knee
