// Unknown layout, pattern construction and the assembly pass.
#include "mna.h"

#include <algorithm>
#include <cmath>
#include <tuple>

#include "check.h"

namespace knee::internal {
namespace {

bool NeedsInternalNode(const Circuit& c, const Element& e) {
  return e.kind == ElementKind::kDiode &&
         c.parts[static_cast<size_t>(e.part)].model.series_res > 0.0;
}

}  // namespace

MnaSystem::MnaSystem(const Circuit& c) {
  node_count_ = c.nodes.size();
  for (size_t n = 1; n < c.nodes.size(); ++n) names_.push_back(c.nodes[n]);
  for (const Element& e : c.elements) {
    shape_.emplace_back(e.kind, e.node_a, e.node_b);
    element_names_.push_back(e.name);
  }
  internal_of_element_.assign(c.elements.size(), -1);
  for (size_t e = 0; e < c.elements.size(); ++e) {
    if (!NeedsInternalNode(c, c.elements[e])) continue;
    internal_of_element_[e] = static_cast<int>(names_.size());
    names_.push_back(c.elements[e].name + ":internal");
  }
  kcl_rows_ = static_cast<int>(names_.size());

  for (int e = 0; e < static_cast<int>(c.elements.size()); ++e) {
    const Element& element = c.elements[static_cast<size_t>(e)];
    switch (element.kind) {
      case ElementKind::kResistor:
        devices_.push_back(MakeResistor(c, e));
        break;
      case ElementKind::kVoltageSource:
        devices_.push_back(MakeVoltageSource(c, e, static_cast<int>(names_.size())));
        names_.push_back(element.name + ":current");
        break;
      case ElementKind::kCurrentSource:
        devices_.push_back(MakeCurrentSource(c, e));
        break;
      case ElementKind::kDiode:
        devices_.push_back(MakeDiode(c, e, internal_of_element_[static_cast<size_t>(e)]));
        break;
    }
  }

  // Pattern: every device entry plus the diagonal of every KCL row (the gmin shunt).
  EntryCollector collector;
  for (auto& device : devices_) device->DeclareEntries(collector);
  std::vector<int> diagonal_ticket;
  for (int r = 0; r < kcl_rows_; ++r) diagonal_ticket.push_back(collector.Add(r, r));

  const auto& entries = collector.entries();
  std::vector<int> order(entries.size());
  for (size_t t = 0; t < order.size(); ++t) order[t] = static_cast<int>(t);
  const auto key = [&](int t) {
    const auto& en = entries[static_cast<size_t>(t)];
    return std::make_tuple(en.col, en.row);
  };
  std::sort(order.begin(), order.end(), [&](int p, int q) { return key(p) < key(q); });

  const int n = size();
  std::vector<int> slot_of(entries.size(), -1);
  col_ptr_.assign(static_cast<size_t>(n) + 1, 0);
  for (size_t k = 0; k < order.size(); ++k) {
    const auto& en = entries[static_cast<size_t>(order[k])];
    if (k == 0 || key(order[k]) != key(order[k - 1])) {
      row_index_.push_back(en.row);
      ++col_ptr_[static_cast<size_t>(en.col) + 1];
    }
    slot_of[static_cast<size_t>(order[k])] = static_cast<int>(row_index_.size()) - 1;
  }
  for (int col = 0; col < n; ++col) {
    col_ptr_[static_cast<size_t>(col) + 1] += col_ptr_[static_cast<size_t>(col)];
  }
  for (auto& device : devices_) device->BindSlots(slot_of);
  for (int ticket : diagonal_ticket) diagonal_slot_.push_back(slot_of[static_cast<size_t>(ticket)]);

  values_.assign(row_index_.size(), 0.0);
  residual_.assign(static_cast<size_t>(n), 0.0);
  flow_.assign(static_cast<size_t>(n), 0.0);
  magnitude_.assign(static_cast<size_t>(n), 0.0);
}

AssemblyOutcome MnaSystem::Assemble(std::span<const double> x, const AssemblyAids& aids) {
  KNEE_CHECK(static_cast<int>(x.size()) == size());
  std::fill(values_.begin(), values_.end(), 0.0);
  std::fill(residual_.begin(), residual_.end(), 0.0);
  std::fill(flow_.begin(), flow_.end(), 0.0);
  std::fill(magnitude_.begin(), magnitude_.end(), 0.0);
  StampContext ctx{
      x, values_, residual_, flow_, magnitude_, aids.source_scale, aids.limit_junctions, false};
  ctx.want_potential = aids.want_potential;
  ctx.stiff_junction = aids.stiff_junction;
  ctx.junction_floor = aids.junction_floor;
  AssemblyOutcome out;
  for (auto& device : devices_) {
    if (!device->Stamp(ctx) && out.finite) {
      out.finite = false;
      out.bad_element = device->element();
    }
  }
  if (aids.gmin > 0.0) {
    for (int r = 0; r < kcl_rows_; ++r) {
      values_[static_cast<size_t>(diagonal_slot_[static_cast<size_t>(r)])] += aids.gmin;
      ctx.AddCurrent(r, aids.gmin * x[static_cast<size_t>(r)]);
      if (ctx.want_potential) {
        ctx.AddPotential(0.5 * aids.gmin * x[static_cast<size_t>(r)] * x[static_cast<size_t>(r)]);
      }
    }
  }
  out.limited = ctx.limited;
  out.potential = ctx.potential;
  out.potential_magnitude = ctx.potential_magnitude;
  out.max_exponent = ctx.max_exponent;
  if (out.finite) {
    for (double r : residual_) {
      if (!std::isfinite(r)) out.finite = false;
    }
  }
  return out;
}

void MnaSystem::BeginRun(std::span<const double> x) {
  for (auto& device : devices_) device->BeginRun(x);
}

bool MnaSystem::StructureMatches(const Circuit& c) const {
  if (c.nodes.size() != node_count_ || c.elements.size() != shape_.size()) return false;
  for (size_t e = 0; e < c.elements.size(); ++e) {
    const Element& el = c.elements[e];
    if (std::make_tuple(el.kind, el.node_a, el.node_b) != shape_[e]) return false;
    if (NeedsInternalNode(c, el) != (internal_of_element_[e] >= 0)) return false;
  }
  return true;
}

void MnaSystem::UpdateValues(const Circuit& c) {
  KNEE_CHECK(StructureMatches(c));
  for (auto& device : devices_) device->UpdateValues(c);
}

}  // namespace knee::internal
