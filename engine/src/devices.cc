// Stamps of the four element kinds.
#include "devices.h"

#include <array>
#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>
#include <type_traits>
#include <unordered_map>
#include <utility>

#include "check.h"
#include "diode_sensitivity.h"
#include "knee/co_content.h"

namespace knee::internal {

// Relative rounding of a difference of two doubles (unit round-off, IEEE 754 binary64).
constexpr double kJunctionRounding = 1.1102230246251565e-16;
// FallingStep trusts a predicted current down to this fraction of the branch's scale
// above its reverse limit (at most about 14 n*Vt into reverse bias).
constexpr double kFallingFloor = 1e-6;
// ... and acts only where Newton's line predicts a fall of the current below this
// fraction of its present value (a step of more than about 0.9 n*Vt).
constexpr double kFallingFraction = 0.1;

void StampContext::AddCurrent(int row, double i) {
  if (row < 0) return;
  const auto r = static_cast<size_t>(row);
  residual[r] += i;
  flow[r] = std::max(flow[r], std::fabs(i));
  magnitude[r] += std::fabs(i);
}

Incidence IslandMap::Between(int p, int q) const {
  Incidence w;
  const auto add = [&](int u, double c) {
    if (u < 0) return;
    for (int k = 0; k < w.count; ++k) {
      if (w.index[static_cast<size_t>(k)] == u) {
        w.coef[static_cast<size_t>(k)] += c;
        return;
      }
    }
    w.index[static_cast<size_t>(w.count)] = u;
    w.coef[static_cast<size_t>(w.count)] = c;
    ++w.count;
  };
  add(p, 1.0);
  add(root_of(p), 1.0);
  add(q, -1.0);
  add(root_of(q), -1.0);
  int kept = 0;
  for (int k = 0; k < w.count; ++k) {
    if (w.coef[static_cast<size_t>(k)] == 0.0) continue;
    w.index[static_cast<size_t>(kept)] = w.index[static_cast<size_t>(k)];
    w.coef[static_cast<size_t>(kept)] = w.coef[static_cast<size_t>(k)];
    ++kept;
  }
  w.count = kept;
  return w;
}

void IslandMap::ToNodeSpace(std::span<double> d) const {
  if (members_ == 0) return;
  for (size_t u = 0; u < root_of_.size(); ++u) {
    if (root_of_[u] >= 0) d[u] += d[static_cast<size_t>(root_of_[u])];
  }
}

namespace {

double At(std::span<const double> x, int u) { return u < 0 ? 0.0 : x[static_cast<size_t>(u)]; }

// The value slot of an entry's ticket (-1, an entry at gnd, stays -1).
int SlotOf(int ticket, std::span<const int> slot_of) {
  return ticket < 0 ? -1 : slot_of[static_cast<size_t>(ticket)];
}

// A conductance g between node unknowns a and b (-1 for gnd): g w w^T over the incidence
// w of (a, b). In plain nodal coordinates w is {a: +1, b: -1}, and its four entries are
// kept here; across an island's root w has up to four entries and sixteen, kept in a
// block of their own. Most circuits have no islands, and in a million-device circuit
// room for sixteen entries in every device was 200 MB.
class Conductance {
 public:
  Conductance(int a, int b) : a_(a), b_(b) {}
  // Between the node unknowns of a two-terminal element.
  static Conductance Of(const Circuit& c, int element) {
    const Element& e = c.elements[static_cast<size_t>(element)];
    return Conductance(UnknownOfNode(e.node_a), UnknownOfNode(e.node_b));
  }
  // Whether a and b are the unknowns of e's nodes.
  bool Joins(const Element& e) const {
    return a_ == UnknownOfNode(e.node_a) && b_ == UnknownOfNode(e.node_b);
  }
  int a() const { return a_; }
  int b() const { return b_; }

  void Declare(EntryCollector& c) {
    const Incidence w = c.islands().Between(a_, b_);
    if (IsPlain(w)) {
      island_.reset();
      slots_ = {c.Add(a_, a_), c.Add(a_, b_), c.Add(b_, a_), c.Add(b_, b_)};
      return;
    }
    island_ = std::make_unique<IslandEntries>();
    island_->w = w;
    for (int i = 0; i < w.count; ++i) {
      for (int j = 0; j < w.count; ++j) {
        island_->slots[static_cast<size_t>(i * 4 + j)] =
            c.Add(w.index[static_cast<size_t>(i)], w.index[static_cast<size_t>(j)]);
      }
    }
  }
  void Bind(std::span<const int> slot_of) {
    for (int& s : island_ ? std::span<int>(island_->slots) : std::span<int>(slots_)) {
      s = SlotOf(s, slot_of);
    }
  }
  void Stamp(StampContext& ctx, double g) const {
    if (island_) {
      const Incidence& w = island_->w;
      for (int i = 0; i < w.count; ++i) {
        for (int j = 0; j < w.count; ++j) {
          ctx.AddValue(island_->slots[static_cast<size_t>(i * 4 + j)],
                       g * w.coef[static_cast<size_t>(i)] * w.coef[static_cast<size_t>(j)]);
        }
      }
      return;
    }
    ctx.AddValue(slots_[0], g);
    ctx.AddValue(slots_[1], -g);
    ctx.AddValue(slots_[2], -g);
    ctx.AddValue(slots_[3], g);
  }
  // Current i from a to b; its rounding scale `terms` enters every row it touches.
  void AddBranch(StampContext& ctx, double i, double terms) const {
    if (island_) {
      ctx.AddBranch(island_->w, i, terms, a_, b_);
    } else {
      ctx.AddPlainBranch(i, terms, a_, b_);
    }
  }
  // w . v for v in the solver's coordinates of rows (an adjoint vector; x itself holds
  // plain node voltages, whose difference is At(x, a) - At(x, b)).
  double Dot(std::span<const double> v) const {
    if (island_) {
      const Incidence& w = island_->w;
      double s = 0.0;
      for (int k = 0; k < w.count; ++k) {
        s += w.coef[static_cast<size_t>(k)] *
             v[static_cast<size_t>(w.index[static_cast<size_t>(k)])];
      }
      return s;
    }
    return At(v, a_) - At(v, b_);
  }
  // out += g w (w . v).
  void MultiplyAdd(double g, std::span<const double> v, std::span<double> out) const {
    if (island_) {
      const Incidence& w = island_->w;
      double s = 0.0;
      for (int k = 0; k < w.count; ++k) {
        s += w.coef[static_cast<size_t>(k)] *
             v[static_cast<size_t>(w.index[static_cast<size_t>(k)])];
      }
      for (int k = 0; k < w.count; ++k) {
        out[static_cast<size_t>(w.index[static_cast<size_t>(k)])] +=
            g * w.coef[static_cast<size_t>(k)] * s;
      }
      return;
    }
    // The island branch's arithmetic with w = {a: +1, b: -1}: the same bits.
    double s = 0.0;
    if (a_ >= 0) s += v[static_cast<size_t>(a_)];
    if (b_ >= 0) s += -v[static_cast<size_t>(b_)];
    if (a_ >= 0) out[static_cast<size_t>(a_)] += g * s;
    if (b_ >= 0) out[static_cast<size_t>(b_)] += -g * s;
  }

 private:
  struct IslandEntries {
    Incidence w;
    std::array<int, 16> slots{-1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1};
  };
  // w is {a: +1, b: -1} less gnd, the form the four inline entries stand for.
  bool IsPlain(const Incidence& w) const {
    Incidence plain;
    for (const auto& [u, c] : {std::pair{a_, 1.0}, std::pair{b_, -1.0}}) {
      if (u < 0) continue;
      plain.index[static_cast<size_t>(plain.count)] = u;
      plain.coef[static_cast<size_t>(plain.count)] = c;
      ++plain.count;
    }
    if (a_ == b_ || w.count != plain.count) return false;
    for (size_t k = 0; k < static_cast<size_t>(w.count); ++k) {
      if (w.index[k] != plain.index[k] || w.coef[k] != plain.coef[k]) return false;
    }
    return true;
  }

  int a_ = -1, b_ = -1;
  // (a, a), (a, b), (b, a), (b, b); -1 where a or b is gnd.
  std::array<int, 4> slots_{-1, -1, -1, -1};
  std::unique_ptr<IslandEntries> island_;
};

// What every device keeps: the element it stands for. Devices are plain objects in
// DeviceStore's arrays, called by kind (no vtable pointer in each of a million devices).
class Device {
 public:
  explicit Device(int element) : element_(element) {}
  int element() const { return element_; }

 private:
  int element_;
};

class Resistor final : public Device {
 public:
  Resistor(const Circuit& c, int element) : Device(element), pair_(Conductance::Of(c, element)) {
    UpdateValues(c);
  }
  void DeclareEntries(EntryCollector& c) { pair_.Declare(c); }
  void BindSlots(std::span<const int> slot_of) { pair_.Bind(slot_of); }
  void UpdateValues(const Circuit& c) {
    g_ = 1.0 / c.elements[static_cast<size_t>(element())].value;
  }
  bool Stamp(StampContext& ctx) {
    const double va = ctx.X(pair_.a()), vb = ctx.X(pair_.b());
    const double i = g_ * (va - vb);
    if (!std::isfinite(i)) return false;
    pair_.Stamp(ctx, g_);
    pair_.AddBranch(ctx, i, g_ * (std::fabs(va) + std::fabs(vb)));
    // Co-content of a linear resistor: G v^2 / 2.
    if (ctx.want_potential) ctx.AddPotential(0.5 * i * (va - vb));
    return true;
  }
  bool Joins(const Element& e) const { return pair_.Joins(e); }
  DeviceReport Measure(std::span<const double> x) const {
    DeviceReport r;
    r.voltage = At(x, pair_.a()) - At(x, pair_.b());
    r.current = g_ * r.voltage;
    return r;
  }
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const {
    pair_.MultiplyAdd(g_, v, out);
  }
  // F carries I = (v(a) - v(b))/R on its incidence w: dI/dR = -I/R = -I g, and
  // -lambda^T dF/dR = (w . lambda) I g.
  void AddSensitivity(std::span<const double> x, std::span<const double> lambda,
                      CircuitGradient* gradient) const {
    const double i = g_ * (At(x, pair_.a()) - At(x, pair_.b()));
    gradient->value[static_cast<size_t>(element())] += pair_.Dot(lambda) * i * g_;
  }

 private:
  double g_ = 0;
  Conductance pair_;
};

// v(p) - v(n) = V; the branch current k flows from p through the source to n.
class VoltageSource final : public Device {
 public:
  VoltageSource(const Circuit& c, int element, int branch) : Device(element), k_(branch) {
    const Element& e = c.elements[static_cast<size_t>(element)];
    p_ = UnknownOfNode(e.node_a);
    n_ = UnknownOfNode(e.node_b);
    UpdateValues(c);
  }
  // Column k holds the incidence of (p, n) (the branch current's KCL terms), row k its
  // transpose (v(p) - v(n) in the solver's coordinates).
  void DeclareEntries(EntryCollector& c) {
    w_ = c.islands().Between(p_, n_);
    for (int t = 0; t < w_.count; ++t) {
      const int u = w_.index[static_cast<size_t>(t)];
      column_slots_[static_cast<size_t>(t)] = c.Add(u, k_);
      row_slots_[static_cast<size_t>(t)] = c.Add(k_, u);
    }
  }
  void BindSlots(std::span<const int> slot_of) {
    for (int& s : column_slots_) s = SlotOf(s, slot_of);
    for (int& s : row_slots_) s = SlotOf(s, slot_of);
  }
  void UpdateValues(const Circuit& c) { v_ = c.elements[static_cast<size_t>(element())].value; }
  bool Stamp(StampContext& ctx) {
    const double i = ctx.X(k_);
    if (!std::isfinite(i)) return false;
    for (int t = 0; t < w_.count; ++t) {
      ctx.AddValue(column_slots_[static_cast<size_t>(t)], w_.coef[static_cast<size_t>(t)]);
      ctx.AddValue(row_slots_[static_cast<size_t>(t)], w_.coef[static_cast<size_t>(t)]);
    }
    ctx.AddBranch(w_, i, 0.0, p_, n_);
    ctx.residual[static_cast<size_t>(k_)] += ctx.X(p_) - ctx.X(n_) - ctx.source_scale * v_;
    ctx.AddMagnitude(
        k_, std::fabs(ctx.X(p_)) + std::fabs(ctx.X(n_)) + std::fabs(ctx.source_scale * v_));
    return true;
  }
  bool Joins(const Element& e) const {
    return p_ == UnknownOfNode(e.node_a) && n_ == UnknownOfNode(e.node_b);
  }
  DeviceReport Measure(std::span<const double> x) const {
    DeviceReport r;
    r.voltage = At(x, p_) - At(x, n_);
    r.current = At(x, k_);
    return r;
  }
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const {
    const double i = At(v, k_);
    double across = 0.0;
    for (int t = 0; t < w_.count; ++t) {
      const auto u = static_cast<size_t>(w_.index[static_cast<size_t>(t)]);
      out[u] += w_.coef[static_cast<size_t>(t)] * i;
      across += w_.coef[static_cast<size_t>(t)] * v[u];
    }
    out[static_cast<size_t>(k_)] += across;
  }
  // Row k is v(p) - v(n) - V: dF_k/dV = -1.
  void AddSensitivity(std::span<const double>, std::span<const double> lambda,
                      CircuitGradient* gradient) const {
    gradient->value[static_cast<size_t>(element())] += At(lambda, k_);
  }

 private:
  int p_ = -1, n_ = -1, k_ = -1;
  double v_ = 0;
  Incidence w_;
  std::array<int, 4> column_slots_{-1, -1, -1, -1};
  std::array<int, 4> row_slots_{-1, -1, -1, -1};
};

// `value` amperes flow through the source from a to b: out of node a, into node b.
class CurrentSource final : public Device {
 public:
  CurrentSource(const Circuit& c, int element) : Device(element) {
    const Element& e = c.elements[static_cast<size_t>(element)];
    a_ = UnknownOfNode(e.node_a);
    b_ = UnknownOfNode(e.node_b);
    UpdateValues(c);
  }
  void DeclareEntries(EntryCollector& c) { w_ = c.islands().Between(a_, b_); }
  void BindSlots(std::span<const int>) {}
  void UpdateValues(const Circuit& c) { i_ = c.elements[static_cast<size_t>(element())].value; }
  bool Stamp(StampContext& ctx) {
    const double i = ctx.source_scale * i_;
    ctx.AddBranch(w_, i, 0.0, a_, b_);
    // A current source's term of the potential is linear: its gradient is the current
    // it draws out of a and delivers into b, i.e. its KCL contribution.
    if (ctx.want_potential) ctx.AddPotential(i * (ctx.X(a_) - ctx.X(b_)));
    return true;
  }
  bool Joins(const Element& e) const {
    return a_ == UnknownOfNode(e.node_a) && b_ == UnknownOfNode(e.node_b);
  }
  DeviceReport Measure(std::span<const double> x) const {
    DeviceReport r;
    r.voltage = At(x, a_) - At(x, b_);
    r.current = i_;
    return r;
  }
  void MultiplyAdd(std::span<const double>, std::span<double>) const {}
  // F carries the source's current on its incidence w: dF/dI = w.
  void AddSensitivity(std::span<const double>, std::span<const double> lambda,
                      CircuitGradient* gradient) const {
    double across = 0.0;
    for (int t = 0; t < w_.count; ++t) {
      across += w_.coef[static_cast<size_t>(t)] * At(lambda, w_.index[static_cast<size_t>(t)]);
    }
    gradient->value[static_cast<size_t>(element())] -= across;
  }

 private:
  int a_ = -1, b_ = -1;
  double i_ = 0;
  Incidence w_;
};

// The constants of a diode's junction law at its area and temperature, and what derives
// from them alone. Diodes of the same part, area and temperature share one (a million
// diodes of one part share a single basis instead of 100 bytes each).
struct DiodeBasis {
  DiodeConstants d;
  JunctionLimits limits;
  double resolution_scale = 0.0;  // V: the smaller thermal scale of the junction law
  // The inputs it was computed from (with the part's model).
  int part = -1;
  double area = 0.0;
  double temp = 0.0;  // degC

  // Conductance of the junction (g) in series with rs.
  double TwoTerminal(double g) const { return d.rs > 0.0 ? g / (1.0 + d.rs * g) : g; }
};

// The distinct diode bases of a circuit, found by (part, area, temperature).
class DiodeBases {
 public:
  const DiodeBasis& operator[](int k) const { return bases_[static_cast<size_t>(k)]; }
  // Whether basis k still holds for element e (same part, area and temperature, and
  // the part's model unchanged).
  bool Holds(int k, const Circuit& c, const Element& e, std::span<const char> part_changed) const {
    const DiodeBasis& b = (*this)[k];
    return b.part == e.part && part_changed[static_cast<size_t>(e.part)] == 0 && b.area == e.area &&
           b.temp == c.DeviceTemp(e);
  }
  // The index of element e's basis, computed on first use.
  int Find(const Circuit& c, const Element& e) {
    KNEE_CHECK(e.part >= 0 && e.part < static_cast<int>(c.parts.size()));
    const double temp = c.DeviceTemp(e);
    const Key key{e.part, std::bit_cast<std::uint64_t>(e.area), std::bit_cast<std::uint64_t>(temp)};
    const auto [it, added] = index_.try_emplace(key, static_cast<int>(bases_.size()));
    if (added) bases_.push_back(Compute(c.parts[static_cast<size_t>(e.part)].model, e, temp));
    return it->second;
  }
  void Clear() {
    bases_.clear();
    index_.clear();
  }

 private:
  struct Key {
    int part;
    std::uint64_t area;  // the doubles' bits: equal bits give equal constants
    std::uint64_t temp;
    bool operator==(const Key&) const = default;
  };
  struct KeyHash {
    size_t operator()(const Key& k) const {
      return std::hash<std::uint64_t>()(k.area ^ (k.temp * 0x9e3779b97f4a7c15ULL) ^
                                        static_cast<std::uint64_t>(k.part));
    }
  };
  static DiodeBasis Compute(const DiodeModel& model, const Element& e, double temp) {
    DiodeBasis b;
    b.d = ComputeDiodeConstants(model, e.area, temp);
    b.limits = ComputeJunctionLimits(b.d);
    b.resolution_scale = b.d.has_breakdown ? std::min(b.d.n_vt, b.d.nbr_vt) : b.d.n_vt;
    b.part = e.part;
    b.area = e.area;
    b.temp = temp;
    return b;
  }

  std::vector<DiodeBasis> bases_;
  std::unordered_map<Key, int, KeyHash> index_;
};

// Anode a, cathode b. The series resistance is part of the device: the junction voltage
// vj is the root of v(a) - v(b) = vj + rs*I(vj), solved inside the device, and the device
// stamps the two-terminal conductance g/(1 + rs*g). An internal node between rs and the
// junction would carry 1/rs + g on its diagonal, and where g < eps/rs (a junction in
// reverse, a few pA against milliohms) the sum rounds to 1/rs: the node pair between two
// such diodes is then singular in floating point, although the exact equations determine
// it. The two-terminal form keeps every node's equation in its own current scale.
class Diode final : public Device {
 public:
  Diode(const Circuit& c, int element, int basis)
      : Device(element),
        pair_(Conductance::Of(c, element)),
        basis_(basis),
        own_temp_(c.elements[static_cast<size_t>(element)].temp.has_value()) {}
  int basis() const { return basis_; }
  void set_basis(int basis) { basis_ = basis; }
  void set_own_temp(bool own) { own_temp_ = own; }
  bool Joins(const Element& e) const { return pair_.Joins(e); }
  void DeclareEntries(EntryCollector& c) { pair_.Declare(c); }
  void BindSlots(std::span<const int> slot_of) { pair_.Bind(slot_of); }
  void BeginRun(std::span<const double> x, const DiodeBasis& basis) {
    last_vj_ = JunctionVoltageAt(basis.d, At(x, pair_.a()) - At(x, pair_.b()), 0.0);
    limited_ = false;
  }
  bool Stamp(StampContext& ctx, const DiodeBasis& basis) {
    const DiodeConstants& d = basis.d;
    const double va = ctx.X(pair_.a()), vb = ctx.X(pair_.b());
    const double v = va - vb;
    JunctionPoint p;
    const double vj = JunctionVoltageAt(d, v, last_vj_, &p);
    // vj comes from a difference of two node voltages. Where their rounding reaches a
    // thousandth of the junction's thermal scale (node voltages near 1e11 V), the numbers
    // no longer determine the diode's current at all, whatever the KCL residual says:
    // such a point is never accepted as a solution (newton.cc, bias.cc Verify).
    if (ctx.unresolved_element < 0 &&
        kJunctionRounding * (std::fabs(va) + std::fabs(vb)) > 1e-3 * basis.resolution_scale) {
      ctx.unresolved_element = element();
    }
    double at = vj;
    if (ctx.limit_junctions) at = LimitJunctionStep(d, basis.limits, last_vj_, vj);
    limited_ = at != vj;
    ctx.limited = ctx.limited || limited_;
    last_vj_ = at;
    // Linearisation at the (possibly limited) junction point `at`, whose terminal voltage
    // is at + rs*I(at), evaluated at v: the exact current when no limiting happened.
    if (limited_) p = EvaluateJunction(d, at);
    double g = ctx.stiff_junction > 0.0 ? ctx.stiff_junction : p.conductance;
    if (ctx.junction_floor) g = std::max(g, d.is / d.n_vt);
    const double g_exact = basis.TwoTerminal(p.conductance);
    const double i = limited_ ? p.current + g_exact * (v - (at + d.rs * p.current)) : p.current;
    if (!std::isfinite(i) || !std::isfinite(p.conductance)) return false;
    ctx.max_log_current = std::max(ctx.max_log_current, d.log_is + vj / d.n_vt);
    if (d.has_breakdown) {
      ctx.max_log_current = std::max(ctx.max_log_current, d.log_ibr - (vj + d.vbr) / d.nbr_vt);
    }
    stamped_g_ = basis.TwoTerminal(g);
    pair_.Stamp(ctx, stamped_g_);
    // Rounding of v itself moves the current by G * eps * (|v(a)| + |v(b)|); the law's own
    // terms round at their sizes: the forward term at most |I| + Is, the breakdown term
    // ibr*e^y = g_breakdown * nbr*Vt <= g * nbr*Vt (not ibr itself: far from breakdown
    // that term is 1e-300 A, and ibr would swamp the leakage that holds a faint node).
    const double breakdown_scale = d.has_breakdown ? p.conductance * d.nbr_vt : 0.0;
    pair_.AddBranch(ctx, i, g_exact * (std::fabs(va) + std::fabs(vb)) + d.is + breakdown_scale);
    // Co-content of junction and series resistance at v: with v = vj + rs*I(vj),
    // the integral of I dv is the junction's integral of I dvj plus rs*I^2/2.
    if (ctx.want_potential) {
      ctx.AddPotential(JunctionCoContent(d, vj) + 0.5 * d.rs * p.current * p.current);
    }
    return true;
  }
  DeviceReport Measure(std::span<const double> x, const DiodeBasis& basis) const {
    DeviceReport r;
    r.voltage = At(x, pair_.a()) - At(x, pair_.b());
    r.junction_voltage = JunctionVoltageAt(basis.d, r.voltage, last_vj_);
    const JunctionPoint p = EvaluateJunction(basis.d, r.junction_voltage);
    r.current = p.current;
    r.small_signal_res = 1.0 / p.conductance + basis.d.rs;
    return r;
  }
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const {
    pair_.MultiplyAdd(stamped_g_, v, out);
  }
  // F carries the diode's current I(v; c) on its incidence w: -lambda^T dF/dc =
  // -(w . lambda) dI/dc at fixed v (LocalSlopes). The area and temperature take their
  // share here; the part keys, common to the basis, are added to *basis_sum.
  void AddSensitivity(std::span<const double> x, std::span<const double> lambda,
                      const DiodeBasis& basis, const ConstantJacobian& jacobian,
                      ConstantSlopes* basis_sum, CircuitGradient* gradient) const {
    // Where the adjoint vanishes the diode adds exact zeros: its slopes (the costly part,
    // a junction law evaluation) are not needed. The adjoint of one quantity of a large
    // network is zero on most devices once it decays below the smallest normal number.
    const double across = pair_.Dot(lambda);
    if (across == 0.0) return;
    const ConstantSlopes di = CurrentSlopes(basis.d, At(x, pair_.a()) - At(x, pair_.b()), last_vj_);
    const ConstantSlopes area = ConstantsAreaSlopes(basis.d, basis.area);
    double d_area = 0.0, d_temp = 0.0;
    for (size_t c = 0; c < di.size(); ++c) {
      const double s = -across * di[c];
      (*basis_sum)[c] += s;
      d_area += s * area[c];
      d_temp += s * jacobian.temp[c];
    }
    const auto e = static_cast<size_t>(element());
    gradient->area[e] += d_area;
    if (own_temp_) {
      gradient->temp[e] += d_temp;
    } else {
      gradient->circuit_temp += d_temp;
    }
  }
  bool limited() const { return limited_; }

 private:
  Conductance pair_;
  int basis_;  // index into DiodeBases
  bool limited_ = false;
  bool own_temp_ = false;  // the element has its own temp= (sensitivities only)
  double last_vj_ = 0;
  double stamped_g_ = 0;  // S, the two-terminal conductance of the last Stamp
};

// Above the critical voltage the exponential's slope grows so fast that the linearised
// step overshoots; there a step is shortened to the voltage at which the exponential law
// carries the current the linearisation predicted (a logarithmic step). The voltage is
// n*Vt*ln(n*Vt/(sqrt(2)*scale)), from the scale's logarithm where the scale itself is
// below the normal doubles (a cold junction).
double CriticalVoltage(double i_scale, double log_scale, double n_vt) {
  if (i_scale >= std::numeric_limits<double>::min()) {
    return n_vt * std::log(n_vt / (std::sqrt(2.0) * i_scale));
  }
  return n_vt * (std::log(n_vt / std::sqrt(2.0)) - log_scale);
}

double LogStep(double base, double proposed, double n_vt) {
  return base + n_vt * std::log1p((proposed - base) / n_vt);
}

// A falling step of an exponential branch i_scale*(exp(w/n_vt) - 1) from `previous`
// to `proposed`: Newton's line for the branch predicts the current i_pred there. From
// far up the exponential, Newton moves by only about n_vt per step toward a much
// smaller current (the tangent reaches zero current one n_vt below the point), so a
// junction that must come down by volts would crawl for hundreds of steps. The voltage
// at which the law itself carries i_pred is where the step is headed: it is taken
// instead (at or below `proposed`, since the tangent of a convex law lies below it).
// Returns `proposed` when the prediction is at or beyond the branch's reverse limit.
// The branch's exponential term is exp(log_scale + w/n_vt) where the scale is below the
// normal doubles or e^(w/n_vt) beyond them, as in EvaluateJunction.
double FallingStep(double previous, double proposed, double i_scale, double log_scale,
                   double n_vt) {
  const double x = previous / n_vt;
  const bool plain = i_scale >= std::numeric_limits<double>::min() && x <= kLogDoubleMax;
  if (plain) {
    const double e = std::exp(x);
    const double now = i_scale * (e - 1.0);
    const double predicted = now + i_scale / n_vt * e * (proposed - previous);
    if (!(predicted < kFallingFraction * now)) return proposed;  // Newton's step is fine
    const double ratio = 1.0 + predicted / i_scale;
    if (!(ratio > kFallingFloor)) return proposed;
    return std::min(proposed, n_vt * std::log(ratio));
  }
  const double term = std::exp(log_scale + x);
  const double now = term - i_scale;
  const double predicted = now + term / n_vt * (proposed - previous);
  if (!(predicted < kFallingFraction * now)) return proposed;
  // ratio = 1 + predicted/i_scale, in logarithms: ln(predicted + i_scale) - log_scale.
  const double carried = predicted + i_scale;
  if (!(carried > 0.0)) return proposed;
  const double log_ratio = std::log(carried) - log_scale;
  if (!(log_ratio > std::log(kFallingFloor))) return proposed;
  return std::min(proposed, n_vt * log_ratio);
}

}  // namespace

JunctionLimits ComputeJunctionLimits(const DiodeConstants& d) {
  JunctionLimits limits;
  limits.v_crit = CriticalVoltage(d.is, d.log_is, d.n_vt);
  if (d.has_breakdown) limits.u_crit = CriticalVoltage(d.ibr, d.log_ibr, d.nbr_vt);
  return limits;
}

double LimitJunctionStep(const DiodeConstants& d, double previous, double proposed) {
  return LimitJunctionStep(d, ComputeJunctionLimits(d), previous, proposed);
}

double LimitJunctionStep(const DiodeConstants& d, const JunctionLimits& limits, double previous,
                         double proposed) {
  // Forward side: only rising steps overshoot (Newton on a convex increasing exponential
  // approached from above never passes the root).
  const double v_crit = limits.v_crit;
  if (proposed > v_crit && proposed - previous > 2.0 * d.n_vt) {
    const double base = std::max(previous, v_crit);
    if (proposed > base) return LogStep(base, proposed, d.n_vt);
  }
  // Only a step of at least half a thermal scale from a forward-biased junction: near
  // zero bias the law is nearly linear and Newton's step is right (and a step of 1e-17 V
  // must not count as limited, or a converged point never converges).
  if (previous > d.n_vt && proposed < previous - 0.5 * d.n_vt) {
    proposed = FallingStep(previous, proposed, d.is, d.log_is, d.n_vt);
  }
  if (d.has_breakdown) {
    // Breakdown side, mirrored: u = -(vj + vbr) plays the role of the forward voltage.
    const double u_crit = limits.u_crit;
    const double u_prev = -(previous + d.vbr);
    const double u_prop = -(proposed + d.vbr);
    if (u_prop > u_crit && u_prop - u_prev > 2.0 * d.nbr_vt) {
      const double base = std::max(u_prev, u_crit);
      if (u_prop > base) return -LogStep(base, u_prop, d.nbr_vt) - d.vbr;
    }
    if (u_prev > d.nbr_vt && u_prop < u_prev - 0.5 * d.nbr_vt) {
      return -FallingStep(u_prev, u_prop, d.ibr, d.log_ibr, d.nbr_vt) - d.vbr;
    }
  }
  return proposed;
}

struct DeviceStore::Arrays {
  std::vector<Resistor> resistors;
  std::vector<VoltageSource> vsources;
  std::vector<CurrentSource> isources;
  std::vector<Diode> diodes;
  DiodeBases diode_bases;
  // The kind of every device, in element order; each array holds its kind's devices in
  // that order, so a walk keeps one position per array.
  std::vector<ElementKind> order;

  // fn(device) for every device of `a` (an Arrays, const or not) in element order.
  template <typename Self, typename Fn>
  static void ForEach(Self& a, Fn&& fn) {
    size_t r = 0, v = 0, i = 0, d = 0;
    for (const ElementKind kind : a.order) {
      switch (kind) {
        case ElementKind::kResistor:
          fn(a.resistors[r++]);
          break;
        case ElementKind::kVoltageSource:
          fn(a.vsources[v++]);
          break;
        case ElementKind::kCurrentSource:
          fn(a.isources[i++]);
          break;
        case ElementKind::kDiode:
          fn(a.diodes[d++]);
          break;
      }
    }
  }
};

// A diode's calls take its basis; the other devices' do not.
template <typename T>
constexpr bool kIsDiode = std::is_same_v<std::remove_cvref_t<T>, Diode>;

DeviceStore::DeviceStore() : arrays_(std::make_unique<Arrays>()) {}
DeviceStore::~DeviceStore() = default;
DeviceStore::DeviceStore(DeviceStore&&) noexcept = default;
DeviceStore& DeviceStore::operator=(DeviceStore&&) noexcept = default;

void DeviceStore::Reserve(const std::array<size_t, 4>& counts) {
  Arrays& a = *arrays_;
  a.resistors.reserve(counts[static_cast<size_t>(ElementKind::kResistor)]);
  a.vsources.reserve(counts[static_cast<size_t>(ElementKind::kVoltageSource)]);
  a.isources.reserve(counts[static_cast<size_t>(ElementKind::kCurrentSource)]);
  a.diodes.reserve(counts[static_cast<size_t>(ElementKind::kDiode)]);
  a.order.reserve(counts[0] + counts[1] + counts[2] + counts[3]);
}

void DeviceStore::AddResistor(const Circuit& circuit, int element) {
  arrays_->resistors.emplace_back(circuit, element);
  arrays_->order.push_back(ElementKind::kResistor);
}
void DeviceStore::AddVoltageSource(const Circuit& circuit, int element, int branch) {
  arrays_->vsources.emplace_back(circuit, element, branch);
  arrays_->order.push_back(ElementKind::kVoltageSource);
}
void DeviceStore::AddCurrentSource(const Circuit& circuit, int element) {
  arrays_->isources.emplace_back(circuit, element);
  arrays_->order.push_back(ElementKind::kCurrentSource);
}
void DeviceStore::AddDiode(const Circuit& circuit, int element) {
  const int basis =
      arrays_->diode_bases.Find(circuit, circuit.elements[static_cast<size_t>(element)]);
  arrays_->diodes.emplace_back(circuit, element, basis);
  arrays_->order.push_back(ElementKind::kDiode);
}

void DeviceStore::DeclareEntries(EntryCollector& collector) {
  Arrays::ForEach(*arrays_, [&](auto& device) { device.DeclareEntries(collector); });
}

void DeviceStore::BindSlots(std::span<const int> slot_of) {
  Arrays::ForEach(*arrays_, [&](auto& device) { device.BindSlots(slot_of); });
}

void DeviceStore::UpdateValues(const Circuit& circuit, std::span<const char> part_changed) {
  Arrays& a = *arrays_;
  for (Resistor& r : a.resistors) r.UpdateValues(circuit);
  for (VoltageSource& v : a.vsources) v.UpdateValues(circuit);
  for (CurrentSource& i : a.isources) i.UpdateValues(circuit);
  // A sweep point usually changes a source, not a diode: the temperature laws (a log
  // and an exp per basis) are recomputed only when some diode's inputs changed, and
  // then the bases are found afresh (a basis that no diode uses any more is dropped).
  const auto holds = [&](const Diode& d) {
    return a.diode_bases.Holds(d.basis(), circuit,
                               circuit.elements[static_cast<size_t>(d.element())], part_changed);
  };
  if (std::all_of(a.diodes.begin(), a.diodes.end(), holds)) return;
  a.diode_bases.Clear();
  for (Diode& d : a.diodes) {
    const Element& e = circuit.elements[static_cast<size_t>(d.element())];
    d.set_basis(a.diode_bases.Find(circuit, e));
    d.set_own_temp(e.temp.has_value());
  }
}

void DeviceStore::BeginRun(std::span<const double> x) {
  Arrays& a = *arrays_;
  for (Diode& d : a.diodes) d.BeginRun(x, a.diode_bases[d.basis()]);
}

int DeviceStore::Stamp(StampContext& ctx) {
  Arrays& a = *arrays_;
  int bad = -1;
  Arrays::ForEach(a, [&](auto& device) {
    bool ok = true;
    if constexpr (kIsDiode<decltype(device)>) {
      ok = device.Stamp(ctx, a.diode_bases[device.basis()]);
    } else {
      ok = device.Stamp(ctx);
    }
    if (!ok && bad < 0) bad = device.element();
  });
  return bad;
}

void DeviceStore::MultiplyAdd(std::span<const double> v, std::span<double> out) const {
  const Arrays& a = *arrays_;
  for (const Resistor& d : a.resistors) d.MultiplyAdd(v, out);
  for (const VoltageSource& d : a.vsources) d.MultiplyAdd(v, out);
  for (const Diode& d : a.diodes) d.MultiplyAdd(v, out);
}

void DeviceStore::Measure(std::span<const double> x,
                          const std::function<void(int, const DeviceReport&)>& fn) const {
  const Arrays& a = *arrays_;
  Arrays::ForEach(a, [&](const auto& device) {
    if constexpr (kIsDiode<decltype(device)>) {
      fn(device.element(), device.Measure(x, a.diode_bases[device.basis()]));
    } else {
      fn(device.element(), device.Measure(x));
    }
  });
}

bool DeviceStore::Matches(const Circuit& circuit) const {
  const Arrays& a = *arrays_;
  if (a.order.size() != circuit.elements.size()) return false;
  bool same = true;
  size_t k = 0;
  Arrays::ForEach(a, [&](const auto& device) {
    const Element& e = circuit.elements[k];
    same = same && e.kind == a.order[k] && device.Joins(e);
    ++k;
  });
  return same;
}

void DeviceStore::AddSensitivity(const Circuit& circuit, std::span<const double> x,
                                 std::span<const double> lambda, CircuitGradient* gradient) const {
  const Arrays& a = *arrays_;
  // One chain from constants to keys per basis (its logs and exps), not per diode, and
  // the part keys' sums per basis, multiplied out once at the end.
  std::vector<ConstantJacobian> jacobians;
  std::vector<ConstantSlopes> sums;
  std::vector<char> known;
  Arrays::ForEach(a, [&](const auto& device) {
    if constexpr (kIsDiode<decltype(device)>) {
      const auto k = static_cast<size_t>(device.basis());
      if (k >= jacobians.size()) {
        jacobians.resize(k + 1);
        sums.resize(k + 1, ConstantSlopes{});
        known.resize(k + 1, 0);
      }
      const DiodeBasis& basis = a.diode_bases[device.basis()];
      if (known[k] == 0) {
        jacobians[k] = ComputeConstantJacobian(circuit.parts[static_cast<size_t>(basis.part)].model,
                                               basis.area, basis.temp);
        known[k] = 1;
      }
      device.AddSensitivity(x, lambda, basis, jacobians[k], &sums[k], gradient);
    } else {
      device.AddSensitivity(x, lambda, gradient);
    }
  });
  for (size_t k = 0; k < sums.size(); ++k) {
    if (known[k] == 0) continue;
    auto& part = gradient->part[static_cast<size_t>(a.diode_bases[static_cast<int>(k)].part)];
    for (size_t key = 0; key < part.size(); ++key) {
      for (size_t c = 0; c < sums[k].size(); ++c)
        part[key] += sums[k][c] * jacobians[k].key[key][c];
    }
  }
}

std::vector<int> DeviceStore::LimitedElements() const {
  std::vector<int> elements;
  for (const Diode& d : arrays_->diodes) {
    if (d.limited()) elements.push_back(d.element());
  }
  return elements;
}

}  // namespace knee::internal
