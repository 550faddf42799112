// The network's classification before any step: whether every element's law is
// monotone (so the potential method applies and the solution is unique), and, for a
// monotone network, the structural test for a potential unbounded below (no DC
// solution). The mathematics and its sources are in docs/solver.md, "The potential
// method".
#include "network_class.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <queue>
#include <utility>
#include <vector>

#include "device_kinds.h"
#include "disjoint_set.h"
#include "knee/diode_law.h"

namespace knee::internal {
namespace {

using Groups = DisjointSet;

// Maximum flow (shortest augmenting paths, J. Edmonds and R. M. Karp, J. ACM 19(2),
// 1972) on a small graph with real capacities; afterwards, the nodes reachable from the
// source in the residual graph form the source side of a minimum cut.
class FlowGraph {
 public:
  explicit FlowGraph(int n) : adjacent_(static_cast<size_t>(n)) {}
  void AddEdge(int from, int to, double capacity) {
    adjacent_[static_cast<size_t>(from)].push_back(static_cast<int>(edges_.size()));
    edges_.push_back({to, capacity});
    adjacent_[static_cast<size_t>(to)].push_back(static_cast<int>(edges_.size()));
    edges_.push_back({from, 0.0});
  }
  double MaxFlow(int source, int sink) {
    double total = 0.0;
    const size_t n = adjacent_.size();
    while (true) {
      std::vector<int> via(n, -1);  // edge used to reach each node
      const std::vector<char> seen = Reach(source, sink, &via);
      if (!seen[static_cast<size_t>(sink)]) return total;
      double push = std::numeric_limits<double>::infinity();
      for (int v = sink; v != source;) {
        const int e = via[static_cast<size_t>(v)];
        push = std::min(push, edges_[static_cast<size_t>(e)].capacity);
        v = edges_[static_cast<size_t>(e ^ 1)].to;
      }
      for (int v = sink; v != source;) {
        const int e = via[static_cast<size_t>(v)];
        edges_[static_cast<size_t>(e)].capacity -= push;
        edges_[static_cast<size_t>(e ^ 1)].capacity += push;
        v = edges_[static_cast<size_t>(e ^ 1)].to;
      }
      total += push;
    }
  }
  std::vector<char> SourceSide(int source) const { return Reach(source, -1, nullptr); }

 private:
  struct Edge {
    int to;
    double capacity;
  };
  // Breadth-first search from source over the edges with capacity left, until `stop` is
  // reached (-1: every node reachable); (*via)[v] = the edge that reached v.
  std::vector<char> Reach(int source, int stop, std::vector<int>* via) const {
    std::vector<char> seen(adjacent_.size(), 0);
    std::queue<int> queue;
    queue.push(source);
    seen[static_cast<size_t>(source)] = 1;
    while (!queue.empty() && !(stop >= 0 && seen[static_cast<size_t>(stop)])) {
      const int u = queue.front();
      queue.pop();
      for (int e : adjacent_[static_cast<size_t>(u)]) {
        const Edge& edge = edges_[static_cast<size_t>(e)];
        if (edge.capacity > 0.0 && !seen[static_cast<size_t>(edge.to)]) {
          seen[static_cast<size_t>(edge.to)] = 1;
          if (via != nullptr) (*via)[static_cast<size_t>(edge.to)] = e;
          queue.push(edge.to);
        }
      }
    }
    return seen;
  }
  std::vector<std::vector<int>> adjacent_;
  std::vector<Edge> edges_;
};

struct DirectedDiode {
  int element;
  int anode_group;
  int cathode_group;
  double is;  // A, the most reverse current it can carry
};

// Maximum-weight closure (Picard 1976): the set S of groups, without gnd's group, closed
// under `edges` (from in S implies to in S), that maximises sum(profit). Returns the
// membership per group and the value.
std::pair<std::vector<char>, double> MaxClosure(const std::vector<double>& profit,
                                                const std::vector<std::pair<int, int>>& edges,
                                                int ground) {
  const int n = static_cast<int>(profit.size());
  const int source = n;
  const int sink = n + 1;
  FlowGraph graph(n + 2);
  const double infinite = std::numeric_limits<double>::infinity();
  double positive = 0.0;
  for (int g = 0; g < n; ++g) {
    const double p = profit[static_cast<size_t>(g)];
    if (p > 0.0) {
      graph.AddEdge(source, g, p);
      positive += p;
    } else if (p < 0.0) {
      graph.AddEdge(g, sink, -p);
    }
  }
  for (const auto& [from, to] : edges) graph.AddEdge(from, to, infinite);
  graph.AddEdge(ground, sink, infinite);
  const double cut = graph.MaxFlow(source, sink);
  std::vector<char> side = graph.SourceSide(source);
  side.resize(static_cast<size_t>(n));
  return {side, positive - cut};
}

std::string NodeList(const Circuit& c, Groups& groups, const std::vector<char>& in_set) {
  std::vector<std::string> names;
  for (size_t node = 1; node < c.nodes.size(); ++node) {
    if (in_set[static_cast<size_t>(groups.Find(static_cast<int>(node)))]) {
      names.push_back(c.nodes[node]);
    }
  }
  constexpr size_t kShown = 8;
  std::string out;
  for (size_t i = 0; i < names.size() && i < kShown; ++i) {
    out += (i == 0 ? "'" : ", '") + names[i] + "'";
  }
  if (names.size() > kShown) out += fmt::format(" and {} more", names.size() - kShown);
  return out;
}

std::string NameList(const std::vector<std::string>& names) {
  std::string out;
  for (size_t i = 0; i < names.size(); ++i) {
    if (i > 0) out += (i + 1 == names.size()) ? " and " : ", ";
    out += "'" + names[i] + "'";
  }
  return out;
}

// The network reduced to what decides boundedness: groups of nodes that resistors,
// voltage sources and breakdown-capable diodes tie together, the diodes without
// breakdown between groups, and the slope weight of every group.
struct ReducedNetwork {
  explicit ReducedNetwork(size_t node_count) : groups(node_count), weight(node_count, 0.0) {}
  Groups groups;
  std::vector<DirectedDiode> diodes;
  std::vector<double> weight;
  std::vector<std::pair<int, int>> forward_edges, reverse_edges;
  double scale = 0.0;  // A, the sum of every current that enters a weight
};

ReducedNetwork Reduce(const Circuit& c) {
  ReducedNetwork net(c.nodes.size());
  Groups& groups = net.groups;
  // Directions that change a resistor's, a voltage source's or a breakdown-capable
  // diode's voltage raise the potential without bound (quadratically or exponentially):
  // their ends move together. A diode's series resistance ties its anode to its junction.
  std::vector<DirectedDiode>& diodes = net.diodes;
  for (int i = 0; i < static_cast<int>(c.elements.size()); ++i) {
    const Element& e = c.elements[static_cast<size_t>(i)];
    if (e.kind == ElementKind::kResistor || e.kind == ElementKind::kVoltageSource) {
      groups.Join(e.node_a, e.node_b);
    } else if (e.kind == ElementKind::kDiode) {
      const DiodeConstants d = ComputeDiodeConstants(c.parts[static_cast<size_t>(e.part)].model,
                                                     e.area, c.DeviceTemp(e));
      if (d.has_breakdown) {
        groups.Join(e.node_a, e.node_b);
      } else {
        diodes.push_back({i, e.node_a, e.node_b, d.is});
      }
    }
  }
  // Slope of the potential along the indicator of a set S of groups, per group:
  // w(g) = sum over current sources of I*([a in g] - [b in g]) + sum over diodes of
  // Is*([cathode in g] - [anode in g]).
  std::vector<double>& weight = net.weight;
  double& scale = net.scale;
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kCurrentSource) continue;
    weight[static_cast<size_t>(groups.Find(e.node_a))] += e.value;
    weight[static_cast<size_t>(groups.Find(e.node_b))] -= e.value;
    scale += std::fabs(e.value);
  }
  for (DirectedDiode& d : diodes) {
    d.anode_group = groups.Find(d.anode_group);
    d.cathode_group = groups.Find(d.cathode_group);
    if (d.anode_group == d.cathode_group) continue;
    weight[static_cast<size_t>(d.cathode_group)] += d.is;
    weight[static_cast<size_t>(d.anode_group)] -= d.is;
    scale += d.is;
    net.forward_edges.emplace_back(d.anode_group, d.cathode_group);
    net.reverse_edges.emplace_back(d.cathode_group, d.anode_group);
  }
  return net;
}

// The message for a set of groups whose raising (or lowering) lowers the potential
// without bound: the current sources that cross the set and the diodes that leave it in
// reverse.
std::string DescribeCut(const Circuit& c, ReducedNetwork& net, const std::vector<char>& in_set,
                        bool raise) {
  Groups& groups = net.groups;
  std::vector<std::string> sources, blocking;
  double pushed = 0.0;
  double capacity = 0.0;
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kCurrentSource) continue;
    const bool a_in = in_set[static_cast<size_t>(groups.Find(e.node_a))] != 0;
    const bool b_in = in_set[static_cast<size_t>(groups.Find(e.node_b))] != 0;
    if (a_in == b_in) continue;
    sources.push_back(e.name);
    // Current I flows from a to b through the source: into the set when b is inside.
    pushed += (b_in ? e.value : -e.value) * (raise ? 1.0 : -1.0);
  }
  for (const DirectedDiode& d : net.diodes) {
    const bool a_in = in_set[static_cast<size_t>(d.anode_group)] != 0;
    const bool k_in = in_set[static_cast<size_t>(d.cathode_group)] != 0;
    if (a_in == k_in) continue;
    blocking.push_back(c.elements[static_cast<size_t>(d.element)].name);
    capacity += d.is;
  }
  const std::string nodes = NodeList(c, groups, in_set);
  std::string message = fmt::format(
      "no DC solution: current source{} {} {} a net {:.4g} A {} node{} {}",
      sources.size() == 1 ? "" : "s", NameList(sources),
      sources.size() == 1 ? (raise ? "pushes" : "pulls") : (raise ? "push" : "pull"), pushed,
      raise ? "into" : "out of", nodes.find(',') == std::string::npos ? "" : "s", nodes);
  if (blocking.empty()) {
    message += nodes.find(',') == std::string::npos ? ", which has no other path"
                                                    : ", which have no other path";
  } else {
    message += fmt::format(
        ", but the only other way {} is through diode{} {} without breakdown, in reverse, "
        "which carr{} at most {:.4g} A",
        raise ? "out" : "in", blocking.size() == 1 ? "" : "s", NameList(blocking),
        blocking.size() == 1 ? "ies" : "y", capacity);
  }
  message += " (the network's potential is unbounded below)";
  return message;
}

}  // namespace

std::optional<std::string> NonMonotoneReason(const Circuit& c) {
  for (const Element& e : c.elements) {
    if (auto problem = NonMonotoneElement(c, e)) return problem;
  }
  return std::nullopt;
}

std::optional<std::string> FindUnboundedCut(const Circuit& c) {
  // Without a current source every weight is a diode's: a set closed under anode ->
  // cathode holds the cathode of every anode it holds, so its raising rate
  // sum Is*([a in S] - [k in S]) is never positive, and likewise for lowering. Only a
  // current source can push the potential down without bound.
  const bool any_current = std::any_of(c.elements.begin(), c.elements.end(), [](const Element& e) {
    return e.kind == ElementKind::kCurrentSource && e.value != 0.0;
  });
  if (!any_current) return std::nullopt;
  ReducedNetwork net = Reduce(c);
  const int ground = net.groups.Find(kGroundNode);
  if (net.scale == 0.0) return std::nullopt;
  // Raising the voltage of S (closed under anode -> cathode, so no diode is forward
  // biased) changes the potential at the rate sum_S w; lowering a set T (closed under
  // cathode -> anode) at the rate -sum_T w. Every direction is a positive combination of
  // such indicators (its level sets), so these two closures decide boundedness.
  std::vector<double> negated(net.weight.size());
  for (size_t g = 0; g < net.weight.size(); ++g) negated[g] = -net.weight[g];
  const double tolerance = 64 * std::numeric_limits<double>::epsilon() * net.scale;
  for (int raise = 1; raise >= 0; --raise) {
    const auto [in_set, value] = MaxClosure(raise ? negated : net.weight,
                                            raise ? net.forward_edges : net.reverse_edges, ground);
    if (!(value > tolerance)) continue;
    return DescribeCut(c, net, in_set, raise != 0);
  }
  return std::nullopt;
}

}  // namespace knee::internal
