// Junctions held by the voltage sources alone (forced_junctions.h).
#include "forced_junctions.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <queue>
#include <utility>

#include "disjoint_set.h"
#include "knee/diode_law.h"

namespace knee::internal {

namespace {

// A current given by its natural logarithm, as "3.3e70 A" (also beyond the doubles).
std::string CurrentFromLog(double log_magnitude, bool negative) {
  const double decades = log_magnitude / std::log(10.0);
  const double exponent = std::floor(decades);
  double mantissa = std::pow(10.0, decades - exponent);
  double e = exponent;
  if (mantissa >= 9.95) {  // 9.96e70 printed with two digits is 1e71
    mantissa /= 10.0;
    e += 1.0;
  }
  return fmt::format("{}{:.2g}e{:.0f} A", negative ? "-" : "", mantissa, e);
}

}  // namespace

std::optional<std::string> OutOfRangeSaturation(const Circuit& c) {
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kDiode) continue;
    if (e.part < 0 || e.part >= static_cast<int>(c.parts.size())) continue;
    const Part& part = c.parts[static_cast<size_t>(e.part)];
    auto problem =
        OutOfRangeSaturation(c, e, ComputeDiodeConstants(part.model, e.area, c.DeviceTemp(e)));
    if (problem) return problem;
  }
  return std::nullopt;
}

std::optional<std::string> OutOfRangeSaturation(const Circuit& c, const Element& e,
                                                const DiodeConstants& d) {
  const Part& part = c.parts[static_cast<size_t>(e.part)];
  if (!(d.log_is > std::log(kMaxForcedCurrent))) return std::nullopt;
  return fmt::format(
      "diode {} (part {}) has a saturation current of {} at {:g} C by the temperature law "
      "(sat_current {:g} A at {:g} C, bandgap {:g} eV, ideality {:g}, area {:g}): more than "
      "the {:g} MA any diode could carry, at any bias; check the part's bandgap and "
      "ideality and the temperature",
      e.name, part.name, CurrentFromLog(d.log_is, false), c.DeviceTemp(e), part.model.sat_current,
      part.model.ref_temp, part.model.bandgap, part.model.ideality, e.area,
      kMaxForcedCurrent / 1e6);
}

std::vector<ForcedJunction> FindForcedJunctions(const Circuit& c) {
  std::vector<ForcedJunction> forced;
  const size_t nodes = c.nodes.size();
  // Union-find over the voltage sources: nodes whose difference the sources fix.
  DisjointSet sets(nodes);
  const auto find = [&](int n) { return sets.Find(n); };
  bool any_source = false;
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kVoltageSource) continue;
    sets.Join(e.node_a, e.node_b);
    any_source = true;
  }
  if (!any_source) return forced;
  std::vector<std::vector<std::pair<int, int>>> edges;  // per node: (element, other node)
  for (int k = 0; k < static_cast<int>(c.elements.size()); ++k) {
    const Element& e = c.elements[static_cast<size_t>(k)];
    if (e.kind != ElementKind::kDiode || e.node_a == e.node_b) continue;
    if (e.part < 0 || e.part >= static_cast<int>(c.parts.size())) continue;
    if (c.parts[static_cast<size_t>(e.part)].model.series_res / e.area > 0.0) continue;
    if (find(e.node_a) != find(e.node_b)) continue;
    // Rare: the chain of sources from anode to cathode, by a breadth-first search.
    if (edges.empty()) {
      edges.resize(nodes);
      for (int s = 0; s < static_cast<int>(c.elements.size()); ++s) {
        const Element& v = c.elements[static_cast<size_t>(s)];
        if (v.kind != ElementKind::kVoltageSource) continue;
        edges[static_cast<size_t>(v.node_a)].emplace_back(s, v.node_b);
        edges[static_cast<size_t>(v.node_b)].emplace_back(s, v.node_a);
      }
    }
    std::vector<int> via(nodes, -1);  // the source element that reached each node
    std::vector<int> from(nodes, -1);
    std::queue<int> queue;
    queue.push(e.node_a);
    from[static_cast<size_t>(e.node_a)] = e.node_a;
    while (!queue.empty() && from[static_cast<size_t>(e.node_b)] < 0) {
      const int n = queue.front();
      queue.pop();
      for (const auto& [s, m] : edges[static_cast<size_t>(n)]) {
        if (from[static_cast<size_t>(m)] >= 0) continue;
        from[static_cast<size_t>(m)] = n;
        via[static_cast<size_t>(m)] = s;
        queue.push(m);
      }
    }
    ForcedJunction f;
    f.diode = k;
    // Walking from the anode to the cathode across a source from its P to its N side
    // drops its value: vj = v(anode) - v(cathode) = sum of the drops.
    for (int n = e.node_b; n != e.node_a; n = from[static_cast<size_t>(n)]) {
      const int s = via[static_cast<size_t>(n)];
      const Element& v = c.elements[static_cast<size_t>(s)];
      f.sources.emplace_back(s, v.node_b == n ? 1.0 : -1.0);
    }
    forced.push_back(std::move(f));
  }
  return forced;
}

std::optional<std::string> ForcedJunctionProblem(const Circuit& c,
                                                 const std::vector<ForcedJunction>& forced) {
  for (const ForcedJunction& f : forced) {
    const Element& e = c.elements[static_cast<size_t>(f.diode)];
    double vj = 0.0;
    std::string names;
    for (size_t k = f.sources.size(); k-- > 0;) {  // in order from anode to cathode
      const Element& v = c.elements[static_cast<size_t>(f.sources[k].first)];
      vj += f.sources[k].second * v.value;
      if (!names.empty()) names += k == 0 ? " and " : ", ";
      names += v.name;
    }
    const DiodeConstants d =
        ComputeDiodeConstants(c.parts[static_cast<size_t>(e.part)].model, e.area, c.DeviceTemp(e));
    const double current = EvaluateJunction(d, vj).current;
    if (std::isfinite(current) && std::fabs(current) <= kMaxForcedCurrent) continue;
    const bool breakdown =
        d.has_breakdown && d.log_ibr - (vj + d.vbr) / d.nbr_vt > d.log_is + vj / d.n_vt;
    const double log_current =
        std::isfinite(current) ? std::log(std::fabs(current)) : LogJunctionCurrent(d, vj);
    return fmt::format(
        "{} is across {}{} with no resistance: its current would be {} ({:.4g} V on the "
        "junction), more than the {:g} MA any diode could carry; give its part a series_res "
        "or put a resistor in the loop",
        e.name, names, f.sources.size() == 1 ? "" : " in series",
        CurrentFromLog(log_current, std::isfinite(current) ? current < 0.0 : breakdown), vj,
        kMaxForcedCurrent / 1e6);
  }
  return std::nullopt;
}

namespace {

bool ResistanceFree(const Circuit& c, const Element& e) {
  if (e.kind == ElementKind::kVoltageSource) return true;
  if (e.kind != ElementKind::kDiode) return false;
  if (e.part < 0 || e.part >= static_cast<int>(c.parts.size())) return false;
  return !(c.parts[static_cast<size_t>(e.part)].model.series_res / e.area > 0.0);
}

// The edges above `last` on the stack form one block (biconnected component); every
// junction of a block that holds a voltage source is on a loop with the block's others.
void CloseBlock(const Circuit& c, int last, std::vector<int>& edge_stack,
                std::vector<LoopJunction>& loops) {
  std::vector<int> block;
  while (!edge_stack.empty()) {
    const int k = edge_stack.back();
    edge_stack.pop_back();
    block.push_back(k);
    if (k == last) break;
  }
  if (block.size() < 2) return;  // a bridge: on no cycle
  const bool has_source = std::any_of(block.begin(), block.end(), [&](int k) {
    return c.elements[static_cast<size_t>(k)].kind == ElementKind::kVoltageSource;
  });
  if (!has_source) return;  // junctions alone drive nothing
  for (int k : block) {
    if (c.elements[static_cast<size_t>(k)].kind != ElementKind::kDiode) continue;
    LoopJunction l;
    l.diode = k;
    for (int j : block) {
      if (j != k) l.others.push_back(j);
    }
    std::sort(l.others.begin(), l.others.end());
    loops.push_back(std::move(l));
  }
}

}  // namespace

void SourceGraphKey(const Circuit& c, std::vector<int>* key) {
  key->clear();
  key->push_back(static_cast<int>(c.nodes.size()));
  for (int k = 0; k < static_cast<int>(c.elements.size()); ++k) {
    const Element& e = c.elements[static_cast<size_t>(k)];
    if (!ResistanceFree(c, e)) continue;
    key->insert(key->end(), {k, static_cast<int>(e.kind), e.node_a, e.node_b});
  }
}

std::vector<LoopJunction> LoopJunctions(const Circuit& c) {
  const size_t nodes = c.nodes.size();
  std::vector<std::vector<std::pair<int, int>>> edges(nodes);  // (element, other node)
  bool any_diode = false;
  for (int k = 0; k < static_cast<int>(c.elements.size()); ++k) {
    const Element& e = c.elements[static_cast<size_t>(k)];
    if (!ResistanceFree(c, e) || e.node_a == e.node_b) continue;
    any_diode = any_diode || e.kind == ElementKind::kDiode;
    edges[static_cast<size_t>(e.node_a)].emplace_back(k, e.node_b);
    edges[static_cast<size_t>(e.node_b)].emplace_back(k, e.node_a);
  }
  std::vector<LoopJunction> loops;
  if (!any_diode) return loops;
  // Blocks (biconnected components) by an iterative depth-first search with a stack of
  // edges: two edges lie on a common simple cycle exactly when they share a block. When
  // the search returns from w to u with low[w] >= order[u], the edges above (u, w) on
  // the stack are one block. Parallel edges are told apart by their element.
  std::vector<int> order(nodes, -1), low(nodes, 0);
  std::vector<int> edge_stack;
  struct Frame {
    int node, via;  // via: the element that reached node (-1 at a root)
    size_t next;    // next edge of node to look at
  };
  std::vector<Frame> stack;
  int counter = 0;
  const auto close_block = [&](int last) { CloseBlock(c, last, edge_stack, loops); };
  for (size_t root = 0; root < nodes; ++root) {
    if (order[root] >= 0 || edges[root].empty()) continue;
    stack.push_back({static_cast<int>(root), -1, 0});
    order[root] = low[root] = counter++;
    while (!stack.empty()) {
      Frame& f = stack.back();
      const auto u = static_cast<size_t>(f.node);
      if (f.next < edges[u].size()) {
        const auto [k, w] = edges[u][f.next++];
        if (k == f.via) continue;
        const auto wi = static_cast<size_t>(w);
        if (order[wi] < 0) {
          edge_stack.push_back(k);
          order[wi] = low[wi] = counter++;
          stack.push_back({w, k, 0});
        } else if (order[wi] < order[u]) {
          edge_stack.push_back(k);  // a back edge, once (from its lower end)
          low[u] = std::min(low[u], order[wi]);
        }
        continue;
      }
      const Frame done = f;
      stack.pop_back();
      if (!stack.empty()) {
        const auto parent = static_cast<size_t>(stack.back().node);
        const auto d = static_cast<size_t>(done.node);
        low[parent] = std::min(low[parent], low[d]);
        if (low[d] >= order[parent]) close_block(done.via);
      }
    }
  }
  std::sort(loops.begin(), loops.end(),
            [](const LoopJunction& p, const LoopJunction& q) { return p.diode < q.diode; });
  return loops;
}

std::optional<std::string> LoopJunctionProblem(const Circuit& c,
                                               const std::vector<LoopJunction>& loops,
                                               const std::vector<double>& current_of) {
  for (const LoopJunction& l : loops) {
    const double current = current_of[static_cast<size_t>(l.diode)];
    if (std::fabs(current) <= kMaxForcedCurrent) continue;
    std::string names;
    for (size_t i = 0; i < l.others.size(); ++i) {
      if (i > 0) names += i + 1 == l.others.size() ? " and " : ", ";
      names += c.elements[static_cast<size_t>(l.others[i])].name;
    }
    return fmt::format(
        "{} is in a loop with {} and no resistance: its current is {}, more than the {:g} MA "
        "any diode could carry; give the parts a series_res or put a resistor in the loop",
        c.elements[static_cast<size_t>(l.diode)].name, names,
        CurrentFromLog(std::log(std::fabs(current)), current < 0.0), kMaxForcedCurrent / 1e6);
  }
  return std::nullopt;
}

}  // namespace knee::internal
