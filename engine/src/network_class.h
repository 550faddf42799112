// The network's classification, read from its elements before any step: the monotone
// class the potential method handles, and the structural test for a monotone network
// without a DC solution (docs/solver.md, "The potential method").
#pragma once

#include <optional>
#include <string>

#include "knee/circuit.h"

namespace knee::internal {

// Why the network is outside the class the potential method handles (a resistor that
// is not > 0, a diode constant that makes its law non-increasing, a non-finite source),
// or nothing when every element is monotone.
std::optional<std::string> NonMonotoneReason(const Circuit& circuit);

// A monotone network has no DC solution exactly when its potential is unbounded below
// along some direction that keeps the voltage sources satisfied. Along a direction d
// the potential grows without bound unless d changes no resistor, voltage source or
// breakdown-capable diode voltage and puts every other diode in reverse; then its
// asymptotic slope is sum(I * (d_a - d_b)) over current sources plus sum(Is * reverse
// change) over those diodes. Level sets of d reduce this to sets of node groups, and the
// most negative slope is a maximum-weight closure (J.-C. Picard, "Maximal closure of a
// graph and applications to combinatorial problems", Management Science 22(11), 1976),
// found with a maximum flow. Returns the message naming the elements, or nothing.
std::optional<std::string> FindUnboundedCut(const Circuit& circuit);

}  // namespace knee::internal
