// Junctions that the voltage sources alone hold: a diode without series resistance whose
// two nodes are joined by a chain of voltage sources. Its junction voltage is the sum of
// those sources, whatever the rest of the network does, and nothing in the circuit
// limits its current but the law itself. See docs/solver.md, "Junctions across sources".
#pragma once

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "knee/circuit.h"
#include "knee/diode_law.h"

namespace knee::internal {

// A current a forced junction may carry before the circuit counts as beyond the model:
// 1 MA, ten times the surge rating of the largest press-pack rectifiers (recalled from
// memory; common practice, no source). Its voltage is then fixed past the law's range of
// meaning (a 1e-14 A junction across 5 V would carry 3.3e70 A).
inline constexpr double kMaxForcedCurrent = 1e6;  // A

struct ForcedJunction {
  int diode = -1;  // element index
  // The voltage sources of the chain from anode to cathode, each with the sign of its
  // value in the junction voltage: vj = sum of sign * value.
  std::vector<std::pair<int, double>> sources;
};

// The first diode whose saturation current at its temperature, area*Is(T), exceeds
// kMaxForcedCurrent: its reverse leakage alone is more than any diode carries (a 2.3e-11 A
// part with a 2.98 eV bandgap and n = 0.87 reaches 3e18 A at 290 C by the temperature
// law), and conductances of 1e19 S leave the network's equations unresolvable in double
// precision. Said as what the part does, or nothing.
std::optional<std::string> OutOfRangeSaturation(const Circuit& circuit);
// The same for diode e (which has a part) alone, from its constants at its temperature.
std::optional<std::string> OutOfRangeSaturation(const Circuit& circuit, const Element& e,
                                                const DiodeConstants& d);

// Every forced junction of the circuit (a structural property: it holds for any source
// values, so a sweep of a supply finds them once).
std::vector<ForcedJunction> FindForcedJunctions(const Circuit& circuit);

// The first forced junction whose current at the circuit's source values exceeds
// kMaxForcedCurrent, or does not fit a double, said as what the circuit does:
// "D1 is across V1 with no resistance: its current would be 3.3e70 A; ...".
std::optional<std::string> ForcedJunctionProblem(const Circuit& circuit,
                                                 const std::vector<ForcedJunction>& forced);

// A diode without series resistance on a loop of voltage sources and such diodes that
// passes a source: only junctions limit that loop's current (two in series across 5 V
// carry 1.8e28 A by the law). A bank of junctions in parallel, fed through a resistor, is
// on no such loop.
struct LoopJunction {
  int diode = -1;           // element index
  std::vector<int> others;  // the other elements of its block, in element order
};

// Every such diode, from the blocks (biconnected components) of the graph of voltage
// sources and resistance-free diodes: two edges share a simple cycle exactly when they
// share a block (J. Hopcroft and R. Tarjan, "Efficient algorithms for graph
// manipulation", Communications of the ACM 16(6), 1973, recalled from memory). A
// structural property: a sweep of a supply finds them once.
std::vector<LoopJunction> LoopJunctions(const Circuit& circuit);

// All that FindForcedJunctions and LoopJunctions read of a circuit: its node count and
// each resistance-free element (a voltage source, a diode without series resistance) with
// its index, kind and nodes. Equal keys give equal answers, whatever the values.
void SourceGraphKey(const Circuit& circuit, std::vector<int>* key);

// The first of `loops` whose solved current (current_of[element]) exceeds
// kMaxForcedCurrent, said with its block's other elements:
// "D1 is in a loop with V1 and D2 and no resistance: its current is 1.8e28 A; ...".
std::optional<std::string> LoopJunctionProblem(const Circuit& circuit,
                                               const std::vector<LoopJunction>& loops,
                                               const std::vector<double>& current_of);

}  // namespace knee::internal
