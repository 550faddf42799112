// What `knee spread` draws and where it puts it (docs/spread.md): the draw columns of the
// design's vary lines, the circuit with a part of its own for every diode whose part has
// an `each` line, and the slots of that circuit that a sample sets.
#pragma once

#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "knee/netlist.h"
#include "knee/spread_stats.h"

namespace knee::cli {

// One number drawn per sample: a shared vary line, or one diode's draw of an `each` line.
struct DrawColumn {
  int vary = 0;      // index into Design::varies
  int element = -1;  // the diode of an `each` draw; -1 for a shared draw
  std::string name;  // "R1", "SIG.sat_current", "D1:SIG.sat_current"
  std::string unit;
  double low = 0, high = 0, nominal = 0;
};

// A value of the circuit that a sample sets: the product of its draws' factors on the
// nominal (nominal * prod(draw / nominal)), or the one draw itself.
struct DrawSlot {
  SweepTarget target;  // kPartKey: index is the part in the spread circuit
  double nominal = 0;
  std::vector<int> columns;
};

// The value of one vary line for a uniform number u in (0, 1) (netlist.h, VaryLine), with
// what does not depend on u (the limits' logarithms, the normal's cut probabilities)
// worked out once per line.
class DrawMap {
 public:
  explicit DrawMap(const VaryLine& line);
  double operator()(double u) const;

 private:
  bool normal_ = false, factor_ = false, negative_ = false;
  TruncatedNormal truncated_;
  double centre_ = 0, half_ = 0, low_ = 0, high_ = 0;
};

class SpreadPlan {
 public:
  // Prints nothing; "" or a message (e.g. two lines multiplying on a zero nominal).
  std::string Build(const Design& design, const Netlist& netlist, const Overrides& overrides);

  const Circuit& circuit() const { return circuit_; }  // nominal values, parts split
  const std::vector<DrawColumn>& columns() const { return columns_; }
  const std::vector<DrawSlot>& slots() const { return slots_; }
  bool has_param() const { return has_param_; }

  // Sample k's draws (k >= 1): column j from CounterUniform(seed, k, j).
  void Draw(std::uint64_t seed, long long sample, std::span<double> out) const;
  // Corner c (0-based): column j at its high limit when bit j of c is set, else its low.
  void Corner(long long corner, std::span<double> out) const;
  void Nominal(std::span<double> out) const;

  // Sets `circuit` (a copy of circuit()) to the draws. Param lines re-elaborate the
  // netlist with `extra` overrides (a sweep's param axes) added; "" or a message.
  std::string Apply(std::span<const double> draws, const std::vector<Override>& extra,
                    Circuit* circuit) const;

 private:
  // Gives every diode of the parts marked in `split` a copy of its part; returns, per
  // original part, its instances as (part index, diode element or -1 for the original).
  static std::vector<std::vector<std::pair<int, int>>> SplitParts(const std::vector<char>& split,
                                                                  Circuit* circuit);

  const Design* design_ = nullptr;
  const Netlist* netlist_ = nullptr;
  const Overrides* overrides_ = nullptr;
  Circuit circuit_;
  std::vector<char> split_;  // per original part: has an `each` line
  std::vector<DrawColumn> columns_;
  std::vector<DrawMap> maps_;  // per column, of its vary line
  std::vector<DrawSlot> slots_;
  bool has_param_ = false;
};

}  // namespace knee::cli
