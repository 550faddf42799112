// Junctions held by the voltage sources alone (forced_junctions.h).
#include "forced_junctions.h"

#include <fmt/format.h>

#include <cmath>
#include <numeric>
#include <queue>

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
    const DiodeConstants d = ComputeDiodeConstants(part.model, e.area, c.DeviceTemp(e));
    if (!(d.log_is > std::log(kMaxForcedCurrent))) continue;
    return fmt::format(
        "diode {} (part {}) has a saturation current of {} at {:g} C by the temperature law "
        "(sat_current {:g} A at {:g} C, bandgap {:g} eV, ideality {:g}, area {:g}): more than "
        "the {:g} MA any diode could carry, at any bias; check the part's bandgap and "
        "ideality and the temperature",
        e.name, part.name, CurrentFromLog(d.log_is, false), c.DeviceTemp(e), part.model.sat_current,
        part.model.ref_temp, part.model.bandgap, part.model.ideality, e.area,
        kMaxForcedCurrent / 1e6);
  }
  return std::nullopt;
}

std::vector<ForcedJunction> FindForcedJunctions(const Circuit& c) {
  std::vector<ForcedJunction> forced;
  const size_t nodes = c.nodes.size();
  // Union-find over the voltage sources: nodes whose difference the sources fix.
  std::vector<int> parent(nodes);
  std::iota(parent.begin(), parent.end(), 0);
  const auto find = [&](int n) {
    while (parent[static_cast<size_t>(n)] != n) {
      n = parent[static_cast<size_t>(n)] =
          parent[static_cast<size_t>(parent[static_cast<size_t>(n)])];
    }
    return n;
  };
  bool any_source = false;
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kVoltageSource) continue;
    parent[static_cast<size_t>(find(e.node_a))] = find(e.node_b);
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

}  // namespace knee::internal
