// Helpers for the reference checks: solve a netlist given as text through the whole
// chain (parser, elaboration, topology check, bias solver) and read results by name.
#pragma once

#include <gtest/gtest.h>

#include <map>
#include <memory>
#include <string>

#include "knee/circuit.h"
#include "knee/netlist.h"
#include "knee/solver.h"

namespace knee::testing {

// A solved bias point: quantities by name ("out.v", "D1.i", "D1.vj").
struct SolvedPoint {
  bool ok = false;
  std::string error;
  Circuit circuit;
  Solution solution;
  std::map<std::string, double> values;

  double at(const std::string& name) const {
    const auto found = values.find(name);
    if (found == values.end()) {
      ADD_FAILURE() << "no quantity '" << name << "'";
      return 0.0;
    }
    return found->second;
  }
};

inline SolvedPoint SolveText(const std::string& text, const Overrides& overrides = {}) {
  SolvedPoint point;
  auto netlist = ParseNetlist(text, "reference.knee");
  if (!netlist.ok()) {
    point.error = "parse: " + netlist.errors().front().message;
    return point;
  }
  auto design = Elaborate(*netlist, overrides);
  if (!design.ok()) {
    point.error = "elaborate: " + design.errors().front().message;
    return point;
  }
  point.circuit = design->circuit;
  const auto topology = CheckTopology(point.circuit);
  if (!topology.empty()) {
    point.error = "topology: " + topology.front().message;
    return point;
  }
  auto solver = BiasSolver::Create(point.circuit, {});
  if (!solver.ok()) {
    point.error = "solver: " + solver.errors().front().message;
    return point;
  }
  const SolveSummary summary = (*solver)->Solve(&point.solution);
  if (summary.status != SolveStatus::kConverged) {
    point.error = std::string("solve: ") + ToString(summary.status) + " " + summary.detail;
    return point;
  }
  const Circuit& c = point.circuit;
  for (size_t n = 0; n < c.nodes.size(); ++n) {
    point.values[c.nodes[n] + ".v"] = point.solution.node_voltage[n];
  }
  for (size_t e = 0; e < c.elements.size(); ++e) {
    const std::string& name = c.elements[e].name;
    point.values[name + ".v"] = point.solution.element_voltage[e];
    point.values[name + ".i"] = point.solution.element_current[e];
    if (c.elements[e].kind == ElementKind::kDiode) {
      point.values[name + ".vj"] = point.solution.junction_voltage[e];
      point.values[name + ".rd"] = point.solution.small_signal_res[e];
    }
  }
  point.ok = true;
  return point;
}

}  // namespace knee::testing
