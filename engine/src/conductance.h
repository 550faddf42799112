// The pieces every device's stamp is built from: reading an unknown, binding an entry's
// slot, and a conductance between two node unknowns in plain or island coordinates.
#pragma once

#include <array>
#include <memory>
#include <span>
#include <utility>

#include "devices.h"
#include "knee/circuit.h"

namespace knee::internal::device {

inline double At(std::span<const double> x, int u) {
  return u < 0 ? 0.0 : x[static_cast<size_t>(u)];
}

// The value slot of an entry's ticket (-1, an entry at gnd, stays -1).
inline int SlotOf(int ticket, std::span<const int> slot_of) {
  return ticket < 0 ? -1 : slot_of[static_cast<size_t>(ticket)];
}

// A conductance g between node unknowns a and b (-1 for gnd): g w w^T over the incidence
// w of (a, b). In plain nodal coordinates w is {a: +1, b: -1}, and its four entries are
// kept here; across an island's root w has up to four entries and sixteen, kept in a
// block of their own. Most circuits have no islands: a device keeps room for four entries
// (sixteen in every device of a million-device circuit would be 200 MB).
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
    if (island_) return IslandDot(island_->w, v);
    return At(v, a_) - At(v, b_);
  }
  // out += g w (w . v).
  void MultiplyAdd(double g, std::span<const double> v, std::span<double> out) const {
    if (island_) {
      const Incidence& w = island_->w;
      const double s = IslandDot(w, v);
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
  static double IslandDot(const Incidence& w, std::span<const double> v) {
    double s = 0.0;
    for (int k = 0; k < w.count; ++k) {
      s += w.coef[static_cast<size_t>(k)] * v[static_cast<size_t>(w.index[static_cast<size_t>(k)])];
    }
    return s;
  }
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
//
// What the stages ask of a kind before any device exists (device_kinds.h) is answered by
// static functions of its class; Device gives the answers of a kind that has nothing to
// say (no junction span, no conductance of its own).
class Device {
 public:
  explicit Device(int element) : element_(element) {}
  int element() const { return element_; }

  // The element's share of the node-voltage bound (screen.cc, SetVoltageBound).
  struct BoundShare {
    double volts = 0.0;  // V of voltage sources
    double amps = 0.0;   // A of current sources
    double ohms = 0.0;   // Ohm of every resistance
  };
  // The voltage a junction law of the element can hold, added to *span (JunctionSpan).
  static void AddVoltageSpan(const Circuit&, const Element&, double, double*) {}
  // The largest conductance of the element's own resistance (S), 0 if it has none.
  static double OwnConductance(const Circuit&, const Element&) { return 0.0; }
  // Whether the element can carry any current at all at a given voltage across it (a
  // voltage source, a junction without series resistance): the island roots prefer the
  // nodes of such elements (mna.cc, FindIslands).
  static bool CarriesAnyCurrent(const Circuit&, const Element&) { return false; }
  // The conductance (S) the element offers between its nodes at a measured point, for the
  // graph readings of which nodes a stray current can move (a current source: none).
  static double ConductanceAt(const Element&, const DeviceReport&) { return 0.0; }

 private:
  int element_;
};

}  // namespace knee::internal::device
