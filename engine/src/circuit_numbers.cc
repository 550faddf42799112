// The numbers of a circuit without its names, which a sweep point's circuit is compared
// with to tell whether only its sources changed (BiasSolver::UpdateValues).
#include <cmath>

#include "bias_impl.h"

namespace knee::internal {
namespace {

// Everything of an element but its name and source location.
void CopyElementNumbers(const Element& from, Element* to) {
  to->kind = from.kind;
  to->node_a = from.node_a;
  to->node_b = from.node_b;
  to->value = from.value;
  to->part = from.part;
  to->area = from.area;
  to->temp = from.temp;
}

bool SameModel(const DiodeModel& p, const DiodeModel& q) {
  return p.sat_current == q.sat_current && p.ideality == q.ideality &&
         p.series_res == q.series_res && p.breakdown_v == q.breakdown_v &&
         p.breakdown_i == q.breakdown_i && p.breakdown_ideality == q.breakdown_ideality &&
         p.breakdown_tc == q.breakdown_tc && p.bandgap == q.bandgap &&
         p.sat_temp_exp == q.sat_temp_exp && p.ref_temp == q.ref_temp &&
         p.max_current == q.max_current && p.max_reverse_v == q.max_reverse_v &&
         p.max_power == q.max_power;
}

}  // namespace

// The solver reads names from the caller's circuit, so only the numbers are kept.
Circuit NumbersOf(const Circuit& c) {
  Circuit copy;
  copy.temp = c.temp;
  copy.nodes.resize(c.nodes.size());
  copy.parts = c.parts;
  copy.elements.resize(c.elements.size());
  for (size_t e = 0; e < c.elements.size(); ++e) {
    CopyElementNumbers(c.elements[e], &copy.elements[e]);
  }
  return copy;
}

bool AssignValues(const Circuit& from, Circuit* to) {
  if (from.nodes.size() != to->nodes.size() || from.parts.size() != to->parts.size() ||
      from.elements.size() != to->elements.size()) {
    *to = NumbersOf(from);
    return false;
  }
  bool sources_only = from.temp == to->temp;
  to->temp = from.temp;
  for (size_t p = 0; p < from.parts.size(); ++p) {
    sources_only = sources_only && SameModel(from.parts[p].model, to->parts[p].model);
    to->parts[p].model = from.parts[p].model;
  }
  for (size_t e = 0; e < from.elements.size(); ++e) {
    const Element& f = from.elements[e];
    Element& t = to->elements[e];
    if (sources_only && !(f.kind == t.kind && f.node_a == t.node_a && f.node_b == t.node_b &&
                          f.part == t.part && f.area == t.area && f.temp == t.temp &&
                          (f.value == t.value ||
                           (f.kind == ElementKind::kVoltageSource && std::isfinite(f.value))))) {
      sources_only = false;
    }
    CopyElementNumbers(f, &t);
  }
  return sources_only;
}

}  // namespace knee::internal
