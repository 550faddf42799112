// The diode device and the junction-law constants its instances share (DiodeBasis).
#pragma once

#include <fmt/format.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <unordered_map>
#include <vector>

#include "check.h"
#include "conductance.h"
#include "diode_sensitivity.h"
#include "knee/co_content.h"
#include "knee/diode_law.h"

namespace knee::internal::device {

// Relative rounding of a difference of two doubles (unit round-off, IEEE 754 binary64).
inline constexpr double kJunctionRounding = 1.1102230246251565e-16;

// The constants of a diode's junction law at its area and temperature, and what derives
// from them alone. Diodes of the same part, area and temperature share one (a million
// diodes of one part share a single basis instead of 100 bytes each).
struct DiodeBasis {
  DiodeConstants d;
  JunctionScales scales;  // ScalesOf(d)
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
    return Groups(k, c, e) && part_changed[static_cast<size_t>(e.part)] == 0;
  }
  // Whether element e still belongs to basis k (same part, area and temperature), its
  // part's model changed or not.
  bool Groups(int k, const Circuit& c, const Element& e) const {
    const DiodeBasis& b = (*this)[k];
    return b.part == e.part && b.area == e.area && b.temp == c.DeviceTemp(e);
  }
  // Computes again, in place, every basis whose part's model changed.
  void Recompute(const Circuit& c, std::span<const char> part_changed) {
    for (DiodeBasis& b : bases_) {
      if (part_changed[static_cast<size_t>(b.part)] == 0) continue;
      b = Compute(c.parts[static_cast<size_t>(b.part)].model, b.part, b.area, b.temp);
    }
  }
  // The index of element e's basis, computed on first use.
  int Find(const Circuit& c, const Element& e) {
    KNEE_CHECK(e.part >= 0 && e.part < static_cast<int>(c.parts.size()));
    const double temp = c.DeviceTemp(e);
    const Key key{e.part, std::bit_cast<std::uint64_t>(e.area), std::bit_cast<std::uint64_t>(temp)};
    const auto [it, added] = index_.try_emplace(key, static_cast<int>(bases_.size()));
    if (added) {
      bases_.push_back(Compute(c.parts[static_cast<size_t>(e.part)].model, e.part, e.area, temp));
    }
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
  static DiodeBasis Compute(const DiodeModel& model, int part, double area, double temp) {
    DiodeBasis b;
    b.d = ComputeDiodeConstants(model, area, temp);
    b.scales = ScalesOf(b.d);
    b.limits = ComputeJunctionLimits(b.d);
    b.resolution_scale = b.d.has_breakdown ? std::min(b.d.n_vt, b.d.nbr_vt) : b.d.n_vt;
    b.part = part;
    b.area = area;
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
  // The law is strictly increasing where its constants are finite and positive at the
  // diode's temperature. area*Is(T) may be below the smallest double (a cold junction):
  // its logarithm decides, since the law is evaluated from it.
  static std::optional<std::string> NonMonotone(const Circuit& c, const Element& e) {
    if (e.part < 0 || e.part >= static_cast<int>(c.parts.size())) {
      return fmt::format("diode '{}' has no part", e.name);
    }
    return NonMonotone(c, e, ConstantsOf(c, e));
  }
  // The same, from the constants of ConstantsOf(c, e).
  static std::optional<std::string> NonMonotone(const Circuit& c, const Element& e,
                                                const DiodeConstants& d) {
    const auto finite = [](double v) { return std::isfinite(v); };
    const bool forward_ok = finite(d.is) && finite(d.log_is) && finite(d.n_vt) && d.n_vt > 0.0;
    const bool series_ok = finite(d.rs) && d.rs >= 0.0;
    const bool breakdown_ok =
        !d.has_breakdown ||
        (finite(d.ibr) && d.ibr > 0.0 && finite(d.nbr_vt) && d.nbr_vt > 0.0 && finite(d.vbr));
    if (!(forward_ok && series_ok && breakdown_ok)) {
      return fmt::format(
          "diode '{}' has a law that is not strictly increasing at {:g} C (Is {:g} A, "
          "n*Vt {:g} V, series {:g} Ohm)",
          e.name, c.DeviceTemp(e), d.is, d.n_vt, d.rs);
    }
    return std::nullopt;
  }
  static BoundShare Bound(const Circuit& c, const Element& e) {
    BoundShare b;
    b.ohms = c.parts[static_cast<size_t>(e.part)].model.series_res / e.area;
    return b;
  }
  // The law spans at most `exponents` thermal scales on either side (beyond it the
  // exponential is 0 or above 1e300 A), or from zero bias up to where its term leaves
  // the doubles when that is further, plus the breakdown voltage.
  static void AddVoltageSpan(const Circuit& c, const Element& e, double exponents, double* span) {
    AddVoltageSpan(ConstantsOf(c, e), exponents, span);
  }
  static void AddVoltageSpan(const DiodeConstants& d, double exponents, double* span) {
    *span += std::max(exponents, kLogDoubleMax - d.log_is) * d.n_vt;
    if (d.has_breakdown) *span += std::fabs(d.vbr) + exponents * d.nbr_vt;
  }
  static double ConductanceAt(const Element&, const DeviceReport& r) {
    return 1.0 / r.small_signal_res;
  }
  static double OwnConductance(const Circuit& c, const Element& e) {
    if (!HasPart(c, e)) return 0.0;
    const double rs = c.parts[static_cast<size_t>(e.part)].model.series_res / e.area;
    return rs > 0.0 ? 1.0 / rs : 0.0;
  }
  static bool CarriesAnyCurrent(const Circuit& c, const Element& e) {
    return HasPart(c, e) && !(c.parts[static_cast<size_t>(e.part)].model.series_res / e.area > 0.0);
  }
  static bool HasPart(const Circuit& c, const Element& e) {
    return e.part >= 0 && e.part < static_cast<int>(c.parts.size());
  }
  // The law's constants of diode e (which has a part) at its area and temperature.
  static DiodeConstants ConstantsOf(const Circuit& c, const Element& e) {
    return ComputeDiodeConstants(c.parts[static_cast<size_t>(e.part)].model, e.area,
                                 c.DeviceTemp(e));
  }
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
    // Without series resistance vj is the terminal voltage: no search, nothing to keep.
    const bool searched = basis.d.rs > 0.0;
    last_vj_ = JunctionVoltageAt(basis.d, At(x, pair_.a()) - At(x, pair_.b()), 0.0,
                                 searched ? &last_point_ : nullptr);
    has_last_point_ = searched;
    limited_ = false;
  }
  // The basis changed: the junction point kept for last_vj_ is no longer its law's.
  void ForgetPoint() { has_last_point_ = false; }
  // The law at the terminal voltage of ctx.x: the junction's own point when the diode has
  // no series resistance (the `law_at_v` that Stamp takes).
  JunctionPoint LawAtTerminals(const StampContext& ctx, const DiodeBasis& basis) const {
    return EvaluateJunction(basis.d, ctx.X(pair_.a()) - ctx.X(pair_.b()), basis.scales);
  }
  // law_at_v: LawAtTerminals(ctx, basis), read only without series resistance.
  bool Stamp(StampContext& ctx, const DiodeBasis& basis, const JunctionPoint& law_at_v) {
    const DiodeConstants& d = basis.d;
    const double va = ctx.X(pair_.a()), vb = ctx.X(pair_.b());
    const double v = va - vb;
    JunctionPoint p;
    // Without series resistance the junction voltage is v itself (as JunctionVoltageAt
    // gives it), and the law at v is the caller's: the ladder's diodes are all such.
    double vj = v;
    if (d.rs > 0.0) {
      vj = JunctionVoltageAt(d, v, last_vj_, &p, KnownPoint());
    } else {
      p = law_at_v;
    }
    // The logarithms of the law's two terms at vj, which only the potential method reads
    // (its cap on trial points), taken before any store the compiler must assume reaches
    // d: the divisions are then those the law's evaluation just made, where it was in
    // line. A Newton assembly makes none of them.
    double log_forward = 0.0, log_breakdown = 0.0;
    if (ctx.want_potential) {
      log_forward = d.log_is + vj / d.n_vt;
      if (d.has_breakdown) log_breakdown = d.log_ibr - (vj + d.vbr) / d.nbr_vt;
    }
    // vj comes from a difference of two node voltages. Where their rounding reaches a
    // thousandth of the junction's thermal scale (node voltages near 1e11 V), the numbers
    // no longer determine the diode's current at all, whatever the KCL residual says:
    // such a point is never accepted as a solution (newton.cc, post_solve.cc Verify).
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
    if (limited_) p = EvaluateJunction(d, at, basis.scales);
    // Without series resistance there is no search to start (vj is v itself).
    if (d.rs > 0.0) {
      last_point_ = p;
      has_last_point_ = true;
    }
    double g = ctx.stiff_junction > 0.0 ? ctx.stiff_junction : p.conductance;
    if (ctx.junction_floor) g = std::max(g, basis.scales.forward);
    const double g_exact = basis.TwoTerminal(p.conductance);
    const double i = limited_ ? p.current + g_exact * (v - (at + d.rs * p.current)) : p.current;
    if (!std::isfinite(i) || !std::isfinite(p.conductance)) return false;
    if (ctx.want_potential) {
      ctx.max_log_current = std::max(ctx.max_log_current, log_forward);
      if (d.has_breakdown) ctx.max_log_current = std::max(ctx.max_log_current, log_breakdown);
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
    // The search reports the law at the junction voltage it returns.
    JunctionPoint p;
    r.junction_voltage = JunctionVoltageAt(basis.d, r.voltage, last_vj_, &p, KnownPoint());
    r.current = p.current;
    r.small_signal_res = 1.0 / p.conductance + basis.d.rs;
    return r;
  }
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const {
    pair_.MultiplyAdd(stamped_g_, v, out);
  }
  // F carries the diode's current I(v; c) on its incidence w: -lambda^T dF/dc =
  // -(w . lambda) dI/dc at fixed v (LocalSlopes). The area and temperature take their
  // share here; the part keys, common to the basis, are added to *basis_sum. `jacobian`
  // and `area` (ConstantsAreaSlopes) are the basis's.
  void AddSensitivity(std::span<const double> x, std::span<const double> lambda,
                      const DiodeBasis& basis, const ConstantJacobian& jacobian,
                      const ConstantSlopes& area, ConstantSlopes* basis_sum,
                      CircuitGradient* gradient) const {
    // Where the adjoint vanishes the diode adds exact zeros: its slopes (the costly part,
    // a junction law evaluation) are not needed. The adjoint of one quantity of a large
    // network is zero on most devices once it decays below the smallest normal number.
    const double across = pair_.Dot(lambda);
    if (across == 0.0) return;
    const ConstantSlopes di =
        CurrentSlopes(basis.d, basis.scales, At(x, pair_.a()) - At(x, pair_.b()), last_vj_);
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
  bool own_temp_ = false;        // the element has its own temp= (sensitivities only)
  bool has_last_point_ = false;  // last_point_ holds the law at last_vj_
  // The law at last_vj_ (EvaluateJunction(basis.d, last_vj_)), where the next junction
  // search starts: each search saves one evaluation of the law.
  const JunctionPoint* KnownPoint() const { return has_last_point_ ? &last_point_ : nullptr; }

  double last_vj_ = 0;
  JunctionPoint last_point_;
  double stamped_g_ = 0;  // S, the two-terminal conductance of the last Stamp
};

}  // namespace knee::internal::device
