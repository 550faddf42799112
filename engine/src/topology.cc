// Structural checks before solving: problems that make the MNA matrix singular for
// every value of the unknowns, reported against the netlist instead of as a
// numerical failure.
#include <fmt/format.h>

#include <algorithm>
#include <numeric>
#include <queue>
#include <string>
#include <vector>

#include "disjoint_sets.h"
#include "knee/solver.h"

namespace knee {
namespace {

using internal::DisjointSets;

std::string Quoted(const std::vector<std::string>& names) {
  std::string out;
  for (size_t i = 0; i < names.size(); ++i) {
    if (i > 0) out += (i + 1 == names.size()) ? " and " : ", ";
    out += "'" + names[i] + "'";
  }
  return out;
}

// A diagnostic located at the first element, with notes at the others.
Diagnostic AboutElements(const Circuit& c, const std::vector<int>& elements, std::string message,
                         const std::string& note) {
  Diagnostic d;
  d.message = std::move(message);
  if (!elements.empty()) d.where = c.elements[static_cast<size_t>(elements.front())].where;
  for (size_t i = 1; i < elements.size(); ++i) {
    const Element& e = c.elements[static_cast<size_t>(elements[i])];
    d.notes.emplace_back(e.where, fmt::format("'{}' {}", e.name, note));
  }
  return d;
}

std::vector<std::string> ElementNames(const Circuit& c, const std::vector<int>& elements) {
  std::vector<std::string> names;
  for (int e : elements) names.push_back(c.elements[static_cast<size_t>(e)].name);
  return names;
}

std::vector<std::string> NodeNames(const Circuit& c, const std::vector<int>& nodes) {
  std::vector<std::string> names;
  for (int n : nodes) names.push_back(c.nodes[static_cast<size_t>(n)]);
  return names;
}

void CheckSelfLoops(const Circuit& c, std::vector<Diagnostic>* out) {
  for (const Element& e : c.elements) {
    if (e.node_a != e.node_b) continue;
    Diagnostic d;
    d.where = e.where;
    d.message = fmt::format("{} '{}' connects node '{}' to itself", ElementKindName(e.kind), e.name,
                            c.nodes[static_cast<size_t>(e.node_a)]);
    d.hint = "an element needs two different nodes";
    out->push_back(std::move(d));
  }
}

// Voltage sources closing a loop of voltage sources: the loop's branch currents are
// undetermined and its voltages either contradict or repeat each other.
void CheckVoltageLoops(const Circuit& c, std::vector<Diagnostic>* out) {
  DisjointSets sets(c.nodes.size());
  // Accepted vsource edges, per node: (other node, element).
  std::vector<std::vector<std::pair<int, int>>> adjacent(c.nodes.size());
  for (int i = 0; i < static_cast<int>(c.elements.size()); ++i) {
    const Element& e = c.elements[static_cast<size_t>(i)];
    if (e.kind != ElementKind::kVoltageSource || e.node_a == e.node_b) continue;
    if (sets.Join(e.node_a, e.node_b)) {
      adjacent[static_cast<size_t>(e.node_a)].emplace_back(e.node_b, i);
      adjacent[static_cast<size_t>(e.node_b)].emplace_back(e.node_a, i);
      continue;
    }
    // Path from node_b back to node_a through the accepted sources (a tree).
    std::vector<int> via(c.nodes.size(), -2);  // element reaching the node, -1 at the start
    std::queue<int> frontier;
    via[static_cast<size_t>(e.node_b)] = -1;
    frontier.push(e.node_b);
    while (!frontier.empty()) {
      const int node = frontier.front();
      frontier.pop();
      for (auto [next, element] : adjacent[static_cast<size_t>(node)]) {
        if (via[static_cast<size_t>(next)] != -2) continue;
        via[static_cast<size_t>(next)] = element;
        frontier.push(next);
      }
    }
    std::vector<int> loop;
    for (int node = e.node_a; via[static_cast<size_t>(node)] >= 0;) {
      const int element = via[static_cast<size_t>(node)];
      loop.push_back(element);
      const Element& on_path = c.elements[static_cast<size_t>(element)];
      node = on_path.node_a == node ? on_path.node_b : on_path.node_a;
    }
    std::sort(loop.begin(), loop.end());
    loop.push_back(i);
    out->push_back(AboutElements(
        c, loop,
        fmt::format("voltage sources {} form a loop; the current around it is undetermined",
                    Quoted(ElementNames(c, loop))),
        "is part of the loop"));
    out->back().hint = "break the loop with a resistor, or remove one of the sources";
  }
}

// Nodes without a DC path to gnd: a subnetwork joined to the rest by nothing (floating)
// or only by current sources (a cut set of current sources, whose currents KCL would
// have to balance exactly).
void CheckDcPaths(const Circuit& c, std::vector<Diagnostic>* out) {
  DisjointSets sets(c.nodes.size());
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kCurrentSource) sets.Join(e.node_a, e.node_b);
  }
  const int ground = sets.Find(kGroundNode);
  std::vector<int> roots;
  for (int n = 1; n < static_cast<int>(c.nodes.size()); ++n) {
    const int root = sets.Find(n);
    if (root != ground && std::find(roots.begin(), roots.end(), root) == roots.end()) {
      roots.push_back(root);
    }
  }
  for (int root : roots) {
    std::vector<int> nodes;
    for (int n = 1; n < static_cast<int>(c.nodes.size()); ++n) {
      if (sets.Find(n) == root) nodes.push_back(n);
    }
    std::vector<int> members;  // elements inside the subnetwork
    std::vector<int> cut_set;  // current sources with exactly one end inside
    for (int i = 0; i < static_cast<int>(c.elements.size()); ++i) {
      const Element& e = c.elements[static_cast<size_t>(i)];
      const bool a_in = sets.Find(e.node_a) == root;
      const bool b_in = sets.Find(e.node_b) == root;
      if (e.kind == ElementKind::kCurrentSource && a_in != b_in) {
        cut_set.push_back(i);
      } else if (a_in || b_in) {
        members.push_back(i);
      }
    }
    const std::string node_text =
        (nodes.size() == 1 ? "node " : "nodes ") + Quoted(NodeNames(c, nodes));
    if (!cut_set.empty()) {
      out->push_back(AboutElements(
          c, cut_set,
          fmt::format("current sources {} are the only connection of {} to the rest of the "
                      "circuit (a cut set of current sources): {} no DC path to gnd",
                      Quoted(ElementNames(c, cut_set)), node_text,
                      nodes.size() == 1 ? "it has" : "they have"),
          "is part of the cut set"));
      out->back().hint = "give these nodes a DC path to gnd, e.g. a resistor";
    } else {
      out->push_back(AboutElements(
          c, members,
          members.empty()
              ? fmt::format("{} is connected to no element and has no DC path to gnd", node_text)
              : fmt::format("{} {} no DC path to gnd (floating subnetwork of {})", node_text,
                            nodes.size() == 1 ? "has" : "have", Quoted(ElementNames(c, members))),
          "is part of the floating subnetwork"));
      out->back().hint = "connect the subnetwork to gnd";
    }
  }
}

}  // namespace

std::vector<Diagnostic> CheckTopology(const Circuit& circuit) {
  std::vector<Diagnostic> problems;
  if (circuit.elements.empty()) {
    Diagnostic d;
    d.message = "the circuit has no elements";
    problems.push_back(std::move(d));
    return problems;
  }
  CheckSelfLoops(circuit, &problems);
  CheckVoltageLoops(circuit, &problems);
  CheckDcPaths(circuit, &problems);
  return problems;
}

}  // namespace knee
