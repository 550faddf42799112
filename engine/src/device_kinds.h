// What the stages ask of an element kind, answered by the device class of that kind
// (linear_devices.h, diode_device.h): one dispatch from ElementKind to the class, so that
// a new kind answers in its own class and is registered here once.
#pragma once

#include <optional>
#include <string>
#include <type_traits>

#include "diode_device.h"
#include "knee/circuit.h"
#include "linear_devices.h"

namespace knee::internal {

// fn(std::type_identity<DeviceClass>{}) for the class of `kind`.
template <typename Fn>
decltype(auto) WithDeviceClass(ElementKind kind, Fn&& fn) {
  switch (kind) {
    case ElementKind::kResistor:
      return fn(std::type_identity<device::Resistor>{});
    case ElementKind::kVoltageSource:
      return fn(std::type_identity<device::VoltageSource>{});
    case ElementKind::kCurrentSource:
      return fn(std::type_identity<device::CurrentSource>{});
    case ElementKind::kDiode:
      break;
  }
  return fn(std::type_identity<device::Diode>{});
}

// Why the element's law is not strictly increasing, or nothing.
inline std::optional<std::string> NonMonotoneElement(const Circuit& c, const Element& e) {
  return WithDeviceClass(e.kind, [&](auto t) { return decltype(t)::type::NonMonotone(c, e); });
}

inline device::Device::BoundShare BoundShareOf(const Circuit& c, const Element& e) {
  return WithDeviceClass(e.kind, [&](auto t) { return decltype(t)::type::Bound(c, e); });
}

inline void AddVoltageSpan(const Circuit& c, const Element& e, double exponents, double* span) {
  WithDeviceClass(e.kind,
                  [&](auto t) { decltype(t)::type::AddVoltageSpan(c, e, exponents, span); });
}

inline bool CarriesAnyCurrent(const Circuit& c, const Element& e) {
  return WithDeviceClass(e.kind,
                         [&](auto t) { return decltype(t)::type::CarriesAnyCurrent(c, e); });
}

inline double OwnConductance(const Circuit& c, const Element& e) {
  return WithDeviceClass(e.kind, [&](auto t) { return decltype(t)::type::OwnConductance(c, e); });
}

inline double ConductanceAt(const Element& e, const DeviceReport& r) {
  return WithDeviceClass(e.kind, [&](auto t) { return decltype(t)::type::ConductanceAt(e, r); });
}

}  // namespace knee::internal
