// The store of every device of a circuit, called by kind (the device classes are in
// linear_devices.h and diode_device.h).
#include "devices.h"

#include <array>
#include <cmath>
#include <type_traits>
#include <utility>

#include "check.h"
#include "diode_device.h"
#include "linear_devices.h"

namespace knee::internal {

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

using device::CurrentSource;
using device::Diode;
using device::DiodeBases;
using device::DiodeBasis;
using device::Resistor;
using device::VoltageSource;

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

size_t DeviceStore::size() const { return arrays_->order.size(); }

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
  // Only models changed (a spread sample's draws): the diodes keep their bases, whose
  // constants are computed again in place.
  const auto grouped = [&](const Diode& d) {
    return a.diode_bases.Groups(d.basis(), circuit,
                                circuit.elements[static_cast<size_t>(d.element())]);
  };
  if (std::all_of(a.diodes.begin(), a.diodes.end(), grouped)) {
    a.diode_bases.Recompute(circuit, part_changed);
    for (Diode& d : a.diodes) {
      d.set_own_temp(circuit.elements[static_cast<size_t>(d.element())].temp.has_value());
      d.ForgetPoint();
    }
    return;
  }
  a.diode_bases.Clear();
  for (Diode& d : a.diodes) {
    const Element& e = circuit.elements[static_cast<size_t>(d.element())];
    d.set_basis(a.diode_bases.Find(circuit, e));
    d.set_own_temp(e.temp.has_value());
    d.ForgetPoint();
  }
}

void DeviceStore::BeginRun(std::span<const double> x) {
  Arrays& a = *arrays_;
  for (Diode& d : a.diodes) d.BeginRun(x, a.diode_bases[d.basis()]);
}

int DeviceStore::Stamp(StampContext& ctx) {
  Arrays& a = *arrays_;
  int bad = -1;
  // The law of a diode without series resistance is a function of its terminal voltage
  // alone, which the stamps do not change: it is evaluated for a batch of diodes ahead of
  // their stamps, in a loop of nothing but laws, where the divisions and exponentials of
  // consecutive diodes overlap (inside a stamp each waits on the one before). The same
  // operations on the same numbers: the same bits. The batch stays in the first-level cache.
  constexpr size_t kLawBatch = 32;
  std::array<JunctionPoint, kLawBatch> laws;
  size_t batch_begin = 0, batch_end = 0;  // laws[k - batch_begin] for diodes [begin, end)
  Arrays::ForEach(a, [&](auto& device) {
    bool ok = true;
    if constexpr (kIsDiode<decltype(device)>) {
      const auto d = static_cast<size_t>(&device - a.diodes.data());
      if (d == batch_end) {
        batch_begin = d;
        batch_end = std::min(d + kLawBatch, a.diodes.size());
        for (size_t k = batch_begin; k < batch_end; ++k) {
          const Diode& ahead = a.diodes[k];
          const DiodeBasis& basis = a.diode_bases[ahead.basis()];
          if (!(basis.d.rs > 0.0)) laws[k - batch_begin] = ahead.LawAtTerminals(ctx, basis);
        }
      }
      ok = device.Stamp(ctx, a.diode_bases[device.basis()], laws[d - batch_begin]);
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
  struct BasisTerms {
    bool known = false;
    ConstantJacobian jacobian;  // of the basis's part, area and temperature
    ConstantSlopes area{};      // ConstantsAreaSlopes of the basis
    ConstantSlopes sum{};       // the part keys' share, summed over the basis's diodes
  };
  std::vector<BasisTerms> terms;
  Arrays::ForEach(a, [&](const auto& device) {
    if constexpr (kIsDiode<decltype(device)>) {
      const auto k = static_cast<size_t>(device.basis());
      if (k >= terms.size()) terms.resize(k + 1);
      BasisTerms& t = terms[k];
      const DiodeBasis& basis = a.diode_bases[device.basis()];
      if (!t.known) {
        t.jacobian = ComputeConstantJacobian(circuit.parts[static_cast<size_t>(basis.part)].model,
                                             basis.area, basis.temp);
        t.area = ConstantsAreaSlopes(basis.d, basis.area);
        t.known = true;
      }
      device.AddSensitivity(x, lambda, basis, t.jacobian, t.area, &t.sum, gradient);
    } else {
      device.AddSensitivity(x, lambda, gradient);
    }
  });
  for (size_t k = 0; k < terms.size(); ++k) {
    const BasisTerms& t = terms[k];
    if (!t.known) continue;
    auto& part = gradient->part[static_cast<size_t>(a.diode_bases[static_cast<int>(k)].part)];
    for (size_t key = 0; key < part.size(); ++key) {
      for (size_t c = 0; c < t.sum.size(); ++c) part[key] += t.sum[c] * t.jacobian.key[key][c];
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
