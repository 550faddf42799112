// Stamps of the four element kinds.
#include "devices.h"

#include <array>
#include <cmath>
#include <cstdint>
#include <utility>

#include "check.h"
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
      s = s < 0 ? -1 : slot_of[static_cast<size_t>(s)];
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

class Resistor final : public Device {
 public:
  Resistor(const Circuit& c, int element) : Device(element), pair_(Conductance::Of(c, element)) {
    UpdateValues(c, {});
  }
  void DeclareEntries(EntryCollector& c) override { pair_.Declare(c); }
  void BindSlots(std::span<const int> slot_of) override { pair_.Bind(slot_of); }
  void UpdateValues(const Circuit& c, std::span<const char>) override {
    g_ = 1.0 / c.elements[static_cast<size_t>(element())].value;
  }
  bool Stamp(StampContext& ctx) override {
    const double va = ctx.X(pair_.a()), vb = ctx.X(pair_.b());
    const double i = g_ * (va - vb);
    if (!std::isfinite(i)) return false;
    pair_.Stamp(ctx, g_);
    pair_.AddBranch(ctx, i, g_ * (std::fabs(va) + std::fabs(vb)));
    // Co-content of a linear resistor: G v^2 / 2.
    if (ctx.want_potential) ctx.AddPotential(0.5 * i * (va - vb));
    return true;
  }
  DeviceReport Measure(std::span<const double> x) const override {
    DeviceReport r;
    r.voltage = At(x, pair_.a()) - At(x, pair_.b());
    r.current = g_ * r.voltage;
    return r;
  }
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const override {
    pair_.MultiplyAdd(g_, v, out);
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
    UpdateValues(c, {});
  }
  // Column k holds the incidence of (p, n) (the branch current's KCL terms), row k its
  // transpose (v(p) - v(n) in the solver's coordinates).
  void DeclareEntries(EntryCollector& c) override {
    w_ = c.islands().Between(p_, n_);
    for (int t = 0; t < w_.count; ++t) {
      const int u = w_.index[static_cast<size_t>(t)];
      column_slots_[static_cast<size_t>(t)] = c.Add(u, k_);
      row_slots_[static_cast<size_t>(t)] = c.Add(k_, u);
    }
  }
  void BindSlots(std::span<const int> slot_of) override {
    for (int& s : column_slots_) s = Bind(s, slot_of);
    for (int& s : row_slots_) s = Bind(s, slot_of);
  }
  void UpdateValues(const Circuit& c, std::span<const char>) override {
    v_ = c.elements[static_cast<size_t>(element())].value;
  }
  bool Stamp(StampContext& ctx) override {
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
  DeviceReport Measure(std::span<const double> x) const override {
    DeviceReport r;
    r.voltage = At(x, p_) - At(x, n_);
    r.current = At(x, k_);
    return r;
  }
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const override {
    const double i = At(v, k_);
    double across = 0.0;
    for (int t = 0; t < w_.count; ++t) {
      const auto u = static_cast<size_t>(w_.index[static_cast<size_t>(t)]);
      out[u] += w_.coef[static_cast<size_t>(t)] * i;
      across += w_.coef[static_cast<size_t>(t)] * v[u];
    }
    out[static_cast<size_t>(k_)] += across;
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
    UpdateValues(c, {});
  }
  void DeclareEntries(EntryCollector& c) override { w_ = c.islands().Between(a_, b_); }
  void BindSlots(std::span<const int>) override {}
  void UpdateValues(const Circuit& c, std::span<const char>) override {
    i_ = c.elements[static_cast<size_t>(element())].value;
  }
  bool Stamp(StampContext& ctx) override {
    const double i = ctx.source_scale * i_;
    ctx.AddBranch(w_, i, 0.0, a_, b_);
    // A current source's term of the potential is linear: its gradient is the current
    // it draws out of a and delivers into b, i.e. its KCL contribution.
    if (ctx.want_potential) ctx.AddPotential(i * (ctx.X(a_) - ctx.X(b_)));
    return true;
  }
  DeviceReport Measure(std::span<const double> x) const override {
    DeviceReport r;
    r.voltage = At(x, a_) - At(x, b_);
    r.current = i_;
    return r;
  }
  void MultiplyAdd(std::span<const double>, std::span<double>) const override {}

 private:
  int a_ = -1, b_ = -1;
  double i_ = 0;
  Incidence w_;
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
  Diode(const Circuit& c, int element) : Device(element), pair_(Conductance::Of(c, element)) {
    const Element& e = c.elements[static_cast<size_t>(element)];
    KNEE_CHECK(e.part >= 0 && e.part < static_cast<int>(c.parts.size()));
    UpdateValues(c, {});
  }
  void DeclareEntries(EntryCollector& c) override { pair_.Declare(c); }
  void BindSlots(std::span<const int> slot_of) override { pair_.Bind(slot_of); }
  void UpdateValues(const Circuit& c, std::span<const char> part_changed) override {
    const Element& e = c.elements[static_cast<size_t>(element())];
    const DiodeModel& model = c.parts[static_cast<size_t>(e.part)].model;
    // A sweep point usually changes a source, not this diode: the temperature laws (a
    // log and an exp per diode) are recomputed only when their inputs changed. The
    // part's model is compared once per part by the caller, not kept per diode.
    const double temp = c.DeviceTemp(e);
    if (have_inputs_ && part_changed[static_cast<size_t>(e.part)] == 0 && e.area == area_ &&
        temp == temp_) {
      return;
    }
    area_ = e.area;
    temp_ = temp;
    have_inputs_ = true;
    d_ = ComputeDiodeConstants(model, e.area, temp);
    limits_ = ComputeJunctionLimits(d_);
    resolution_scale_ = d_.has_breakdown ? std::min(d_.n_vt, d_.nbr_vt) : d_.n_vt;
  }
  void BeginRun(std::span<const double> x) override {
    last_vj_ = JunctionVoltageAt(d_, At(x, pair_.a()) - At(x, pair_.b()), 0.0);
    limited_ = false;
  }
  bool Stamp(StampContext& ctx) override {
    const double va = ctx.X(pair_.a()), vb = ctx.X(pair_.b());
    const double v = va - vb;
    JunctionPoint p;
    const double vj = JunctionVoltageAt(d_, v, last_vj_, &p);
    // vj comes from a difference of two node voltages. Where their rounding reaches a
    // thousandth of the junction's thermal scale (node voltages near 1e11 V), the numbers
    // no longer determine the diode's current at all, whatever the KCL residual says:
    // such a point is never accepted as a solution (newton.cc, bias.cc Verify).
    if (ctx.unresolved_element < 0 &&
        kJunctionRounding * (std::fabs(va) + std::fabs(vb)) > 1e-3 * resolution_scale_) {
      ctx.unresolved_element = element();
    }
    double at = vj;
    if (ctx.limit_junctions) at = LimitJunctionStep(d_, limits_, last_vj_, vj);
    limited_ = at != vj;
    ctx.limited = ctx.limited || limited_;
    last_vj_ = at;
    // Linearisation at the (possibly limited) junction point `at`, whose terminal voltage
    // is at + rs*I(at), evaluated at v: the exact current when no limiting happened.
    if (limited_) p = EvaluateJunction(d_, at);
    double g = ctx.stiff_junction > 0.0 ? ctx.stiff_junction : p.conductance;
    if (ctx.junction_floor) g = std::max(g, d_.is / d_.n_vt);
    const double g_exact = TwoTerminal(p.conductance);
    const double i = limited_ ? p.current + g_exact * (v - (at + d_.rs * p.current)) : p.current;
    if (!std::isfinite(i) || !std::isfinite(p.conductance)) return false;
    ctx.max_exponent = std::max(ctx.max_exponent, vj / d_.n_vt);
    if (d_.has_breakdown) {
      ctx.max_exponent = std::max(ctx.max_exponent, -(vj + d_.vbr) / d_.nbr_vt);
    }
    stamped_g_ = TwoTerminal(g);
    pair_.Stamp(ctx, stamped_g_);
    // Rounding of v itself moves the current by G * eps * (|v(a)| + |v(b)|); the law's own
    // terms round at their sizes: the forward term at most |I| + Is, the breakdown term
    // ibr*e^y = g_breakdown * nbr*Vt <= g * nbr*Vt (not ibr itself: far from breakdown
    // that term is 1e-300 A, and ibr would swamp the leakage that holds a faint node).
    const double breakdown_scale = d_.has_breakdown ? p.conductance * d_.nbr_vt : 0.0;
    pair_.AddBranch(ctx, i, g_exact * (std::fabs(va) + std::fabs(vb)) + d_.is + breakdown_scale);
    // Co-content of junction and series resistance at v: with v = vj + rs*I(vj),
    // the integral of I dv is the junction's integral of I dvj plus rs*I^2/2.
    if (ctx.want_potential) {
      ctx.AddPotential(JunctionCoContent(d_, vj) + 0.5 * d_.rs * p.current * p.current);
    }
    return true;
  }
  DeviceReport Measure(std::span<const double> x) const override {
    DeviceReport r;
    r.voltage = At(x, pair_.a()) - At(x, pair_.b());
    r.junction_voltage = JunctionVoltageAt(d_, r.voltage, last_vj_);
    const JunctionPoint p = EvaluateJunction(d_, r.junction_voltage);
    r.current = p.current;
    r.small_signal_res = 1.0 / p.conductance + d_.rs;
    return r;
  }
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const override {
    pair_.MultiplyAdd(stamped_g_, v, out);
  }
  bool limited() const override { return limited_; }

 private:
  // Conductance of the junction (g) in series with rs.
  double TwoTerminal(double g) const { return d_.rs > 0.0 ? g / (1.0 + d_.rs * g) : g; }

  double resolution_scale_ = 0.0;  // V: the smaller thermal scale of the junction law
  DiodeConstants d_;
  JunctionLimits limits_;
  double area_ = 0, temp_ = 0;  // inputs d_ was computed from (with the part's model)
  bool have_inputs_ = false;
  double last_vj_ = 0;
  double stamped_g_ = 0;  // S, the two-terminal conductance of the last Stamp
  bool limited_ = false;
  Conductance pair_;
};

// Above the critical voltage the exponential's slope grows so fast that the linearised
// step overshoots; there a step is shortened to the voltage at which the exponential law
// carries the current the linearisation predicted (a logarithmic step).
double CriticalVoltage(double i_scale, double n_vt) {
  return n_vt * std::log(n_vt / (std::sqrt(2.0) * i_scale));
}

double LogStep(double base, double proposed, double n_vt) {
  return base + n_vt * std::log1p((proposed - base) / n_vt);
}

// The inverse of SafeExp for y > 0.
double SafeLog(double y) {
  const double top = std::exp(kExpLimit);
  return y <= top ? std::log(y) : kExpLimit + (y / top - 1.0);
}

// A falling step of an exponential branch i_scale*(SafeExp(w/n_vt) - 1) from `previous`
// to `proposed`: Newton's line for the branch predicts the current i_pred there. From
// far up the exponential, Newton moves by only about n_vt per step toward a much
// smaller current (the tangent reaches zero current one n_vt below the point), so a
// junction that must come down by volts would crawl for hundreds of steps. The voltage
// at which the law itself carries i_pred is where the step is headed: it is taken
// instead (at or below `proposed`, since the tangent of a convex law lies below it).
// Returns `proposed` when the prediction is at or beyond the branch's reverse limit.
double FallingStep(double previous, double proposed, double i_scale, double n_vt) {
  const double x = previous / n_vt;
  const double now = i_scale * (SafeExp(x) - 1.0);
  const double predicted = now + i_scale / n_vt * SafeExpSlope(x) * (proposed - previous);
  if (!(predicted < kFallingFraction * now)) return proposed;  // Newton's step is fine
  const double ratio = 1.0 + predicted / i_scale;
  if (!(ratio > kFallingFloor)) return proposed;
  return std::min(proposed, n_vt * SafeLog(ratio));
}

}  // namespace

JunctionLimits ComputeJunctionLimits(const DiodeConstants& d) {
  JunctionLimits limits;
  limits.v_crit = CriticalVoltage(d.is, d.n_vt);
  if (d.has_breakdown) limits.u_crit = CriticalVoltage(d.ibr, d.nbr_vt);
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
    proposed = FallingStep(previous, proposed, d.is, d.n_vt);
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
      return -FallingStep(u_prev, u_prop, d.ibr, d.nbr_vt) - d.vbr;
    }
  }
  return proposed;
}

// Kind tags of DeviceStore's order (the index of the array a device is in).
enum : std::uint8_t { kResistorTag, kVoltageSourceTag, kCurrentSourceTag, kDiodeTag };

struct DeviceStore::Arrays {
  std::vector<Resistor> resistors;
  std::vector<VoltageSource> vsources;
  std::vector<CurrentSource> isources;
  std::vector<Diode> diodes;
  std::vector<std::pair<std::uint8_t, int>> order;  // (tag, index in its array) per device
};

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
  all_.reserve(counts[0] + counts[1] + counts[2] + counts[3]);
}

// A device is added to its array and to the order. The pointers of all() are taken
// after each addition; an array that had to grow beyond its reservation moves its
// devices, so the pointers are then renewed.
namespace {
template <typename T>
void Append(std::vector<T>& array, T device, std::uint8_t tag,
            std::vector<std::pair<std::uint8_t, int>>& order, std::vector<Device*>& all) {
  const T* before = array.data();
  array.push_back(std::move(device));
  order.emplace_back(tag, static_cast<int>(array.size()) - 1);
  all.push_back(&array.back());
  if (array.data() != before) {
    size_t k = 0;
    for (size_t i = 0; i < order.size(); ++i) {
      if (order[i].first == tag) all[i] = &array[k++];
    }
  }
}
}  // namespace

void DeviceStore::AddResistor(const Circuit& circuit, int element) {
  Append(arrays_->resistors, Resistor(circuit, element), kResistorTag, arrays_->order, all_);
}
void DeviceStore::AddVoltageSource(const Circuit& circuit, int element, int branch) {
  Append(arrays_->vsources, VoltageSource(circuit, element, branch), kVoltageSourceTag,
         arrays_->order, all_);
}
void DeviceStore::AddCurrentSource(const Circuit& circuit, int element) {
  Append(arrays_->isources, CurrentSource(circuit, element), kCurrentSourceTag, arrays_->order,
         all_);
}
void DeviceStore::AddDiode(const Circuit& circuit, int element) {
  Append(arrays_->diodes, Diode(circuit, element), kDiodeTag, arrays_->order, all_);
}

int DeviceStore::Stamp(StampContext& ctx) {
  Arrays& a = *arrays_;
  int bad = -1;
  for (const auto& [tag, i] : a.order) {
    const auto k = static_cast<size_t>(i);
    bool ok = true;
    int element = -1;
    switch (tag) {
      case kResistorTag:
        ok = a.resistors[k].Stamp(ctx);
        element = a.resistors[k].element();
        break;
      case kVoltageSourceTag:
        ok = a.vsources[k].Stamp(ctx);
        element = a.vsources[k].element();
        break;
      case kCurrentSourceTag:
        ok = a.isources[k].Stamp(ctx);
        element = a.isources[k].element();
        break;
      default:
        ok = a.diodes[k].Stamp(ctx);
        element = a.diodes[k].element();
        break;
    }
    if (!ok && bad < 0) bad = element;
  }
  return bad;
}

void DeviceStore::MultiplyAdd(std::span<const double> v, std::span<double> out) const {
  const Arrays& a = *arrays_;
  for (const Resistor& d : a.resistors) d.MultiplyAdd(v, out);
  for (const VoltageSource& d : a.vsources) d.MultiplyAdd(v, out);
  for (const Diode& d : a.diodes) d.MultiplyAdd(v, out);
}

std::unique_ptr<Device> MakeResistor(const Circuit& circuit, int element) {
  return std::make_unique<Resistor>(circuit, element);
}
std::unique_ptr<Device> MakeVoltageSource(const Circuit& circuit, int element, int branch) {
  return std::make_unique<VoltageSource>(circuit, element, branch);
}
std::unique_ptr<Device> MakeCurrentSource(const Circuit& circuit, int element) {
  return std::make_unique<CurrentSource>(circuit, element);
}
std::unique_ptr<Device> MakeDiode(const Circuit& circuit, int element) {
  return std::make_unique<Diode>(circuit, element);
}

}  // namespace knee::internal
