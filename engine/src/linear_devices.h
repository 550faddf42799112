// The linear devices: resistor, voltage source, current source. Each is a plain class
// with the calls DeviceStore makes by kind (devices.h).
#pragma once

#include <fmt/format.h>

#include <array>
#include <cmath>
#include <optional>
#include <span>
#include <string>

#include "conductance.h"
#include "knee/sensitivity.h"

namespace knee::internal::device {

// A source's law is monotone for any finite value.
inline std::optional<std::string> NonFiniteSource(const Element& e) {
  if (!std::isfinite(e.value)) return fmt::format("source '{}' has no finite value", e.name);
  return std::nullopt;
}

class Resistor final : public Device {
 public:
  // A resistor's law is strictly increasing for a finite value > 0.
  static std::optional<std::string> NonMonotone(const Circuit&, const Element& e) {
    if (!(std::isfinite(e.value) && e.value > 0.0)) {
      return fmt::format("resistor '{}' has {:g} Ohm, not a finite value > 0", e.name, e.value);
    }
    return std::nullopt;
  }
  static BoundShare Bound(const Circuit&, const Element& e) {
    BoundShare b;
    b.ohms = std::fabs(e.value);
    return b;
  }
  static double OwnConductance(const Circuit&, const Element& e) {
    return e.value > 0.0 ? 1.0 / e.value : 0.0;
  }
  static double ConductanceAt(const Element& e, const DeviceReport&) {
    return 1.0 / std::fabs(e.value);
  }
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
  // A voltage source fixes the difference of its nodes whatever current flows.
  static double ConductanceAt(const Element&, const DeviceReport&) { return HUGE_VAL; }
  static std::optional<std::string> NonMonotone(const Circuit&, const Element& e) {
    return NonFiniteSource(e);
  }
  static BoundShare Bound(const Circuit&, const Element& e) {
    BoundShare b;
    b.volts = std::fabs(e.value);
    return b;
  }
  static bool CarriesAnyCurrent(const Circuit&, const Element&) { return true; }
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
  static std::optional<std::string> NonMonotone(const Circuit&, const Element& e) {
    return NonFiniteSource(e);
  }
  static BoundShare Bound(const Circuit&, const Element& e) {
    BoundShare b;
    b.amps = std::fabs(e.value);
    return b;
  }
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

}  // namespace knee::internal::device
