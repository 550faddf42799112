// Unknown layout, pattern construction and the assembly pass.
#include "mna.h"

#include <algorithm>
#include <array>
#include <cmath>

#include "check.h"
#include "device_kinds.h"
#include "disjoint_set.h"

namespace knee::internal {
namespace {

bool SameModel(const DiodeModel& p, const DiodeModel& q) {
  return p.sat_current == q.sat_current && p.ideality == q.ideality &&
         p.series_res == q.series_res && p.breakdown_v == q.breakdown_v &&
         p.breakdown_i == q.breakdown_i && p.breakdown_ideality == q.breakdown_ideality &&
         p.breakdown_tc == q.breakdown_tc && p.bandgap == q.bandgap &&
         p.sat_temp_exp == q.sat_temp_exp && p.ref_temp == q.ref_temp;
}

// IslandMap of the circuit: components of the graph of resistors and voltage sources
// that do not contain gnd, each rooted at its heaviest node (below).
IslandMap FindIslands(const Circuit& c, std::span<const double> node_weight) {
  DisjointSet sets(c.nodes.size());
  const auto find = [&](int n) { return sets.Find(n); };
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kResistor && e.kind != ElementKind::kVoltageSource) continue;
    // The lower node stays the representative: gnd (0) wins, else the island's lowest.
    sets.Join(e.node_a, e.node_b);
  }
  // The root's own KCL is known only to its members' round-off (its row holds the
  // island's sum), so the root is the member whose KCL carries the largest terms, as far
  // as the elements tell before solving: the most elements that can carry any current
  // (voltage sources, diodes without series resistance), then the largest sum of the
  // other elements' largest conductances (1/R, 1/rs), then the lowest node: a nA node as
  // root beside a kA member would have its own KCL only to the kA member's rounding.
  std::vector<double> unbounded(c.nodes.size(), 0.0), conductance(c.nodes.size(), 0.0);
  for (const Element& e : c.elements) {
    const double g = OwnConductance(c, e);
    const bool any_current = CarriesAnyCurrent(c, e);
    for (int n : {e.node_a, e.node_b}) {
      unbounded[static_cast<size_t>(n)] += any_current ? 1.0 : 0.0;
      if (std::isfinite(g)) conductance[static_cast<size_t>(n)] += g;
    }
  }
  std::vector<int> best(c.nodes.size(), -1);  // per representative: the chosen root
  // Given a solution's currents (node_weight, per node unknown), its largest wins.
  const auto heavier = [&](size_t a, size_t b) {
    if (!node_weight.empty()) {
      const double wa = node_weight[a - 1], wb = node_weight[b - 1];
      if (wa != wb) return wa > wb;
    }
    if (unbounded[a] != unbounded[b]) return unbounded[a] > unbounded[b];
    return conductance[a] > conductance[b];
  };
  for (size_t n = 1; n < c.nodes.size(); ++n) {
    const auto rep = static_cast<size_t>(find(static_cast<int>(n)));
    if (rep == static_cast<size_t>(kGroundNode)) continue;
    if (best[rep] < 0 || heavier(n, static_cast<size_t>(best[rep])))
      best[rep] = static_cast<int>(n);
  }
  std::vector<int> root_of(c.nodes.empty() ? 0 : c.nodes.size() - 1, -1);
  int members = 0;
  for (size_t n = 1; n < c.nodes.size(); ++n) {
    const int rep = find(static_cast<int>(n));
    if (rep == kGroundNode) continue;
    const int root = best[static_cast<size_t>(rep)];
    if (root == static_cast<int>(n)) continue;
    root_of[n - 1] = UnknownOfNode(root);
    ++members;
  }
  // Without islands the map holds nothing (root_of is -1 for every node anyway).
  if (members == 0) return IslandMap();
  IslandMap map(std::move(root_of));
  map.set_members(members);
  return map;
}

}  // namespace

MnaSystem::MnaSystem(const Circuit& c, std::span<const double> node_weight)
    : circuit_(&c), islands_(FindIslands(c, node_weight)) {
  node_count_ = c.nodes.size();
  kcl_rows_ = static_cast<int>(node_count_) - 1;
  part_models_.reserve(c.parts.size());
  for (const Part& part : c.parts) part_models_.push_back(part.model);
  part_changed_.assign(c.parts.size(), 0);
  AddDevices(c);
  BuildPattern();
  IndexIslands(c);
  SizeBuffers();
}

// One device per element; a voltage source's branch current is an unknown after the
// circuit nodes.
void MnaSystem::AddDevices(const Circuit& c) {
  int next = kcl_rows_;  // unknowns after the circuit nodes
  std::array<size_t, 4> counts{};
  for (const Element& element : c.elements) ++counts[static_cast<size_t>(element.kind)];
  devices_.Reserve(counts);
  for (int e = 0; e < static_cast<int>(c.elements.size()); ++e) {
    const Element& element = c.elements[static_cast<size_t>(e)];
    switch (element.kind) {
      case ElementKind::kResistor:
        devices_.AddResistor(c, e);
        break;
      case ElementKind::kVoltageSource:
        devices_.AddVoltageSource(c, e, next++);
        element_of_extra_.push_back(e);
        break;
      case ElementKind::kCurrentSource:
        devices_.AddCurrentSource(c, e);
        break;
      case ElementKind::kDiode:
        devices_.AddDiode(c, e);
        break;
    }
  }
  size_ = next;
}

// Pattern: every device entry plus the diagonal of every KCL row (the gmin shunt).
void MnaSystem::BuildPattern() {
  EntryCollector collector(&islands_);
  devices_.DeclareEntries(collector);
  std::vector<int> diagonal_ticket(static_cast<size_t>(kcl_rows_));
  for (int r = 0; r < kcl_rows_; ++r) diagonal_ticket[static_cast<size_t>(r)] = collector.Add(r, r);
  // An island member's shunt to gnd couples its row and column to the root's.
  std::vector<std::array<int, 3>> shunt_tickets;
  for (int r = 0; r < kcl_rows_; ++r) {
    const int root = islands_.root_of(r);
    if (root < 0) continue;
    shunt_tickets.push_back(
        {collector.Add(r, root), collector.Add(root, r), collector.Add(root, root)});
    member_shunts_.push_back({r, root, {-1, -1, -1}});
  }
  const std::vector<int> slot_of = OrderEntries(collector);
  devices_.BindSlots(slot_of);
  diagonal_slot_.reserve(diagonal_ticket.size());
  for (int ticket : diagonal_ticket) diagonal_slot_.push_back(slot_of[static_cast<size_t>(ticket)]);
  for (size_t k = 0; k < member_shunts_.size(); ++k) {
    for (size_t t = 0; t < 3; ++t) {
      member_shunts_[k].slots[t] = slot_of[static_cast<size_t>(shunt_tickets[k][t])];
    }
  }
}

// col_ptr_ and row_index_ from the collected entries; returns each entry's value slot.
// CSC order (column, then row) by a counting pass over the columns and a sort of each
// column's few entries: linear in the entries, where one sort of all of them was not.
std::vector<int> MnaSystem::OrderEntries(const EntryCollector& collector) {
  const auto& entries = collector.entries();
  const int n = size();
  std::vector<int> start(static_cast<size_t>(n) + 1, 0);
  for (const auto& en : entries) ++start[static_cast<size_t>(en.col) + 1];
  for (int col = 0; col < n; ++col) {
    start[static_cast<size_t>(col) + 1] += start[static_cast<size_t>(col)];
  }
  std::vector<int> order(entries.size());
  {
    std::vector<int> fill(start.begin(), start.end() - 1);
    for (size_t t = 0; t < entries.size(); ++t) {
      order[static_cast<size_t>(fill[static_cast<size_t>(entries[t].col)]++)] = static_cast<int>(t);
    }
  }
  const auto row_of = [&](int t) { return entries[static_cast<size_t>(t)].row; };
  std::vector<int> slot_of(entries.size(), -1);
  col_ptr_.assign(static_cast<size_t>(n) + 1, 0);
  row_index_.reserve(entries.size());
  for (int col = 0; col < n; ++col) {
    const auto first = order.begin() + start[static_cast<size_t>(col)];
    const auto last = order.begin() + start[static_cast<size_t>(col) + 1];
    std::sort(first, last, [&](int p, int q) { return row_of(p) < row_of(q); });
    for (auto it = first; it != last; ++it) {
      if (it == first || row_of(*it) != row_of(*(it - 1))) row_index_.push_back(row_of(*it));
      slot_of[static_cast<size_t>(*it)] = static_cast<int>(row_index_.size()) - 1;
    }
    col_ptr_[static_cast<size_t>(col) + 1] = static_cast<int>(row_index_.size());
  }
  row_index_.shrink_to_fit();
  return slot_of;
}

// The islands' roots and members, and the rows a voltage source's incidence touches.
void MnaSystem::IndexIslands(const Circuit& c) {
  {
    std::vector<int> island_of_root(static_cast<size_t>(kcl_rows_), -1);
    for (const MemberShunt& m : member_shunts_) {
      int& k = island_of_root[static_cast<size_t>(m.root)];
      if (k < 0) {
        k = static_cast<int>(roots_.size());
        roots_.push_back(m.root);
        island_members_.emplace_back();
      }
      island_members_[static_cast<size_t>(k)].push_back(m.member);
    }
  }
  source_row_.assign(static_cast<size_t>(kcl_rows_), 0);
  for (const Element& e : c.elements) {
    if (e.kind != ElementKind::kVoltageSource) continue;
    const Incidence w = islands_.Between(UnknownOfNode(e.node_a), UnknownOfNode(e.node_b));
    for (int k = 0; k < w.count; ++k)
      source_row_[static_cast<size_t>(w.index[static_cast<size_t>(k)])] = 1;
  }
}

void MnaSystem::SizeBuffers() {
  const int n = size();
  exact_valid_ = false;
  values_.assign(row_index_.size(), 0.0);
  exact_x_.assign(static_cast<size_t>(n), 0.0);
  residual_.assign(static_cast<size_t>(n), 0.0);
  flow_.assign(static_cast<size_t>(n), 0.0);
  magnitude_.assign(static_cast<size_t>(n), 0.0);
  // Each node's own sums are read only for island roots: without islands the stamps
  // skip them (empty spans).
  if (!roots_.empty()) {
    node_flow_.assign(static_cast<size_t>(kcl_rows_), 0.0);
    node_magnitude_.assign(static_cast<size_t>(kcl_rows_), 0.0);
    node_kcl_.assign(static_cast<size_t>(kcl_rows_), 0.0);
  }
}

void MnaSystem::ReleaseBuffers() {
  for (std::vector<double>* v : {&values_, &exact_x_, &residual_, &flow_, &magnitude_, &node_flow_,
                                 &node_magnitude_, &node_kcl_}) {
    std::vector<double>().swap(*v);
  }
  exact_valid_ = false;
}

std::string MnaSystem::UnknownName(int u) const {
  const auto nodes = static_cast<int>(node_count_) - 1;
  if (u < nodes) return circuit_->nodes[static_cast<size_t>(u) + 1];
  const Element& e =
      circuit_->elements[static_cast<size_t>(element_of_extra_[static_cast<size_t>(u - nodes)])];
  return e.name + ":current";
}

int MnaSystem::BranchUnknown(int element) const {
  // element_of_extra_ is in element order (the branches are numbered as sources appear).
  const auto it = std::lower_bound(element_of_extra_.begin(), element_of_extra_.end(), element);
  if (it == element_of_extra_.end() || *it != element) return -1;
  return kcl_rows_ + static_cast<int>(it - element_of_extra_.begin());
}

AssemblyOutcome MnaSystem::Assemble(std::span<const double> x, const AssemblyAids& aids) {
  KNEE_CHECK(static_cast<int>(x.size()) == size());
  std::fill(values_.begin(), values_.end(), 0.0);
  std::fill(residual_.begin(), residual_.end(), 0.0);
  std::fill(flow_.begin(), flow_.end(), 0.0);
  std::fill(magnitude_.begin(), magnitude_.end(), 0.0);
  std::fill(node_flow_.begin(), node_flow_.end(), 0.0);
  std::fill(node_magnitude_.begin(), node_magnitude_.end(), 0.0);
  std::fill(node_kcl_.begin(), node_kcl_.end(), 0.0);
  StampContext ctx{x,
                   values_,
                   residual_,
                   flow_,
                   magnitude_,
                   node_flow_,
                   node_magnitude_,
                   node_kcl_,
                   aids.source_scale,
                   aids.limit_junctions,
                   false};
  ctx.want_potential = aids.want_potential;
  ctx.stiff_junction = aids.stiff_junction;
  ctx.junction_floor = aids.junction_floor;
  AssemblyOutcome out;
  const int bad = devices_.Stamp(ctx);
  if (bad >= 0) {
    out.finite = false;
    out.bad_element = bad;
  }
  last_gmin_ = aids.gmin;
  if (aids.gmin > 0.0) {
    for (const MemberShunt& m : member_shunts_) {
      for (int slot : m.slots) values_[static_cast<size_t>(slot)] += aids.gmin;
      ctx.AddCurrent(m.root, aids.gmin * x[static_cast<size_t>(m.member)]);
    }
    for (int r = 0; r < kcl_rows_; ++r) {
      values_[static_cast<size_t>(diagonal_slot_[static_cast<size_t>(r)])] += aids.gmin;
      ctx.AddCurrent(r, aids.gmin * x[static_cast<size_t>(r)]);
      if (!node_kcl_.empty())
        node_kcl_[static_cast<size_t>(r)] += aids.gmin * x[static_cast<size_t>(r)];
      if (ctx.want_potential) {
        ctx.AddPotential(0.5 * aids.gmin * x[static_cast<size_t>(r)] * x[static_cast<size_t>(r)]);
      }
    }
  }
  out.limited = ctx.limited;
  out.unresolved_element = ctx.unresolved_element;
  out.potential = ctx.potential;
  out.potential_magnitude = ctx.potential_magnitude;
  out.max_log_current = ctx.max_log_current;
  if (out.finite) {
    for (double r : residual_) {
      if (!std::isfinite(r)) out.finite = false;
    }
  }
  exact_valid_ = aids.gmin == 0.0 && aids.source_scale == 1.0 && !aids.limit_junctions &&
                 !aids.want_potential && aids.stiff_junction == 0.0 && !aids.junction_floor;
  if (exact_valid_) {
    std::copy(x.begin(), x.end(), exact_x_.begin());
    exact_outcome_ = out;
  }
  return out;
}

void MnaSystem::MultiplyJacobian(std::span<const double> v, std::span<double> out) const {
  KNEE_CHECK(static_cast<int>(v.size()) == size() && v.size() == out.size());
  std::fill(out.begin(), out.end(), 0.0);
  devices_.MultiplyAdd(v, out);
  if (last_gmin_ > 0.0) {
    for (size_t r = 0; r < static_cast<size_t>(kcl_rows_); ++r) out[r] += last_gmin_ * v[r];
    for (const MemberShunt& m : member_shunts_) {
      const auto u = static_cast<size_t>(m.member), root = static_cast<size_t>(m.root);
      out[u] += last_gmin_ * v[root];
      out[root] += last_gmin_ * (v[u] + v[root]);
    }
  }
}

void MnaSystem::NodeResidual(std::span<double> residual, std::span<double> allowance,
                             std::span<double> flow) const {
  for (int r = 0; r < kcl_rows_; ++r) {
    const auto i = static_cast<size_t>(r);
    residual[i] = residual_[i];
    allowance[i] = RoundOffAllowance(r);
    flow[i] = flow_[i];
  }
  // A root's row holds its island's sum: its own KCL is summed separately.
  for (int r : roots_) {
    const auto root = static_cast<size_t>(r);
    residual[root] = node_kcl_[root];
    flow[root] = node_flow_[root];
    allowance[root] = kRoundOffFactor * node_magnitude_[root];
  }
  for (size_t k = 0; k < roots_.size(); ++k) {
    for (int m : island_members_[k]) {
      allowance[static_cast<size_t>(roots_[k])] += RoundOffAllowance(m);
    }
  }
}

AssemblyOutcome MnaSystem::AssembleExact(std::span<const double> x) {
  if (exact_valid_ && std::equal(x.begin(), x.end(), exact_x_.begin())) return exact_outcome_;
  return Assemble(x, AssemblyAids{});
}

void MnaSystem::BeginRun(std::span<const double> x) { devices_.BeginRun(x); }

bool MnaSystem::StructureMatches(const Circuit& c) const {
  // The devices hold each element's kind and nodes (no copy of them here).
  return c.nodes.size() == node_count_ && c.parts.size() == part_models_.size() &&
         devices_.Matches(c);
}

void MnaSystem::UpdateValues(const Circuit& c) {
  // The caller has matched the structure (BiasSolver::UpdateValues); the devices' walk of
  // it is not repeated here.
  KNEE_CHECK(c.nodes.size() == node_count_ && c.parts.size() == part_models_.size() &&
             c.elements.size() == devices_.size());
  circuit_ = &c;
  for (size_t p = 0; p < c.parts.size(); ++p) {
    part_changed_[p] = SameModel(c.parts[p].model, part_models_[p]) ? 0 : 1;
    if (part_changed_[p] != 0) part_models_[p] = c.parts[p].model;
  }
  devices_.UpdateValues(c, part_changed_);
  exact_valid_ = false;
}

}  // namespace knee::internal
