#include "torture/verify_solution.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <cmath>
#include <limits>
#include <vector>

namespace knee::torture {
namespace {

// CODATA 2018 exact values (SI 2019 redefinition of the kelvin and the ampere).
constexpr double kBoltzmannJPerK = 1.380649e-23;
constexpr double kChargeC = 1.602176634e-19;
constexpr double kEps = std::numeric_limits<double>::epsilon();

double Vt(double celsius) { return kBoltzmannJPerK * (celsius + 273.15) / kChargeC; }

void Fail(Verification* v, std::string problem) {
  if (v->ok) v->problem = std::move(problem);
  v->ok = false;
}

}  // namespace

namespace {

// The contract's temperature laws (netlist-format.md, "Diode parameters"):
// Is(T) = Is(T0) (T/T0)^(sat_temp_exp/n) exp((Eg/(n Vt0)) (1 - T0/T)),
// Vbr(T) = breakdown_v (1 + breakdown_tc (T - T0)).
// Written out plainly, as products, in x87 extended precision: its exponent range
// (1e-4951 .. 1e4932) holds Is(T) at 4 K (about 1e-1350 A) and e^(Vj/(n Vt)) there
// (e^3100), so the law needs no logarithmic form here and the engine's is not reused.
static_assert(std::numeric_limits<long double>::max_exponent10 >= 4000,
              "the verifier's law needs an extended exponent range");
using Wide = long double;

struct ContractLaw {
  Wide is = 0, n_vt = 0, ibr = 0, nbr_vt = 0, vbr = 0;
  bool breakdown = false;
};

ContractLaw LawAt(const DiodeModel& m, double area, double temp_celsius) {
  const Wide t = static_cast<Wide>(temp_celsius) + 273.15L;
  const Wide t0 = static_cast<Wide>(m.ref_temp) + 273.15L;
  const Wide n = m.ideality;
  const Wide vt0 = static_cast<Wide>(Vt(m.ref_temp));
  ContractLaw law;
  law.is = static_cast<Wide>(area) * static_cast<Wide>(m.sat_current) *
           std::pow(t / t0, static_cast<Wide>(m.sat_temp_exp) / n) *
           std::exp(static_cast<Wide>(m.bandgap) / (n * vt0) * (1.0L - t0 / t));
  law.n_vt = n * static_cast<Wide>(Vt(temp_celsius));
  if (m.breakdown_v) {
    law.breakdown = true;
    law.vbr = *m.breakdown_v * (1.0 + m.breakdown_tc * (temp_celsius - m.ref_temp));
    law.ibr = static_cast<Wide>(area) * static_cast<Wide>(m.breakdown_i);
    law.nbr_vt = static_cast<Wide>(m.breakdown_ideality) * static_cast<Wide>(Vt(temp_celsius));
  }
  return law;
}

}  // namespace

// netlist-format.md, "Diode parameters": I = area*Is(T)*(exp(Vj/(n Vt)) - 1)
//   - area*Ibr*exp(-(Vj + Vbr(T))/(nbr Vt)), the exact law (no overflow aid, no cap),
// rounded to a double at the end (+-inf beyond the doubles).
double ContractDiodeCurrent(const DiodeModel& m, double area, double temp_celsius, double vj) {
  const ContractLaw law = LawAt(m, area, temp_celsius);
  const Wide v = vj;
  Wide current = law.is * std::expm1(v / law.n_vt);
  if (law.breakdown) current -= law.ibr * std::exp(-(v + law.vbr) / law.nbr_vt);
  return static_cast<double>(current);
}

// dI/dV of an element from the contract's equations: 1/R for a resistor; for a diode
// the junction's slope g (the derivative of the law above at vj, written out) in series
// with rs: 1/(rs + 1/g). Sources: 0 (their currents are not functions of their own
// voltage). (A central difference of the law rounds to 0 for a saturated junction whose
// slope is 1e-27 S beside a current of 1e-16 A.)
double SmallSignalConductance(const Circuit& c, const Element& e, double vj) {
  if (e.kind == ElementKind::kResistor) return 1.0 / std::fabs(e.value);
  if (e.kind != ElementKind::kDiode || !std::isfinite(vj)) return 0.0;
  const DiodeModel& m = c.parts[static_cast<size_t>(e.part)].model;
  const ContractLaw law = LawAt(m, e.area, c.DeviceTemp(e));
  const Wide v = vj;
  Wide g = law.is / law.n_vt * std::exp(v / law.n_vt);
  if (law.breakdown) g += law.ibr / law.nbr_vt * std::exp(-(v + law.vbr) / law.nbr_vt);
  const double rs = m.series_res / e.area;
  const double gd = static_cast<double>(g);
  if (!std::isfinite(gd)) return rs > 0.0 ? 1.0 / rs : 0.0;
  return gd / (1.0 + rs * gd);
}

Verification VerifySolution(const Circuit& c, const Solution& s, const VerifyTolerances& tol) {
  Verification v;
  const size_t nodes = c.nodes.size();
  if (s.node_voltage.size() != nodes || s.element_current.size() != c.elements.size() ||
      s.junction_voltage.size() != c.elements.size()) {
    Fail(&v, "solution vectors do not match the circuit");
    return v;
  }
  std::vector<double> sum(nodes, 0.0), magnitude(nodes, 0.0), largest(nodes, 0.0);
  // Node voltages are doubles: the best a solver can report is the exact solution
  // rounded, an ulp or so off at each node, which moves an element's current by its
  // conductance times that, and evaluating g*(va - vb) rounds in proportion to
  // g*(|va| + |vb|). That term joins the sum of magnitudes below, as in the engine's
  // own round-off allowance (mna.h, RoundOffAllowance): 16 eps times the terms.
  for (size_t k = 0; k < c.elements.size(); ++k) {
    const Element& e = c.elements[k];
    const double i = s.element_current[k];
    const double va = s.node_voltage[static_cast<size_t>(e.node_a)];
    const double vb = s.node_voltage[static_cast<size_t>(e.node_b)];
    const double u = va - vb;
    if (!std::isfinite(i) || !std::isfinite(va) || !std::isfinite(vb)) {
      Fail(&v, fmt::format("{}: non-finite value", e.name));
      continue;
    }
    // The element's current leaves node_a and enters node_b.
    sum[static_cast<size_t>(e.node_a)] -= i;
    sum[static_cast<size_t>(e.node_b)] += i;
    for (int n : {e.node_a, e.node_b}) {
      magnitude[static_cast<size_t>(n)] += std::fabs(i);
      largest[static_cast<size_t>(n)] = std::max(largest[static_cast<size_t>(n)], std::fabs(i));
    }
    const double vbound = tol.abs_voltage + tol.rel * std::max(std::fabs(va), std::fabs(vb));
    const double conductance = SmallSignalConductance(c, e, s.junction_voltage[k]);
    for (int n : {e.node_a, e.node_b}) {
      magnitude[static_cast<size_t>(n)] += conductance * (std::fabs(va) + std::fabs(vb));
    }
    switch (e.kind) {
      case ElementKind::kResistor: {
        const double expected = u / e.value;
        // Ohm's law; the voltage difference carries the nodes' round-off.
        const double bound = 8 * kEps * (std::fabs(va) + std::fabs(vb)) / e.value +
                             8 * kEps * std::fabs(expected) + 1e-300;
        if (!(std::fabs(i - expected) <= bound)) {
          Fail(&v, fmt::format("{}: I = {:.6g} A but V/R = {:.6g} A", e.name, i, expected));
        }
        break;
      }
      case ElementKind::kVoltageSource:
        if (!(std::fabs(u - e.value) <= vbound)) {
          Fail(&v, fmt::format("{}: V = {:.9g} V, source {:.9g} V", e.name, u, e.value));
        }
        break;
      case ElementKind::kCurrentSource:
        if (!(i == e.value)) {
          Fail(&v, fmt::format("{}: I = {:.9g} A, source {:.9g} A", e.name, i, e.value));
        }
        break;
      case ElementKind::kDiode: {
        const DiodeModel& m = c.parts[static_cast<size_t>(e.part)].model;
        const double vj = s.junction_voltage[k];
        const double rs = m.series_res / e.area;
        // Series resistance: V = Vj + I*rs.
        if (!(std::fabs(u - (vj + i * rs)) <= vbound)) {
          Fail(&v,
               fmt::format("{}: V = {:.9g} V but Vj + I*rs = {:.9g} V", e.name, u, vj + i * rs));
        }
        // Junction: I = law(Vj). The exponential's argument carries Vj's round-off, and
        // a junction current near zero against its saturation current gets abs_current.
        const double law = ContractDiodeCurrent(m, e.area, c.DeviceTemp(e), vj);
        const double bound = tol.abs_current + tol.rel * std::max(std::fabs(i), std::fabs(law));
        if (!std::isfinite(law) || !(std::fabs(i - law) <= bound)) {
          Fail(&v, fmt::format("{}: I = {:.9g} A but the diode law at Vj = {:.9g} V gives "
                               "{:.9g} A",
                               e.name, i, vj, law));
        }
        break;
      }
    }
  }
  for (size_t n = 1; n < nodes; ++n) {
    const double residual = std::fabs(sum[n]);
    v.max_kcl_residual = std::max(v.max_kcl_residual, residual);
    // The same form as the engine's verification: abs + rel * largest branch current,
    // plus 16 eps times the sum of the terms for floating-point evaluation.
    const double bound = tol.abs_current + tol.rel * largest[n] + 16 * kEps * magnitude[n];
    if (!(residual <= bound)) {
      Fail(&v,
           fmt::format("node '{}': KCL residual {:.3g} A > {:.3g} A", c.nodes[n], residual, bound));
    }
  }
  return v;
}

std::vector<double> RoundOffResolution(const Circuit& c, const Solution& s) {
  const size_t nodes = c.nodes.size();
  // Unknowns: node voltages 1..nodes-1, then one current per voltage source.
  std::vector<int> branch(c.elements.size(), -1);
  int size = static_cast<int>(nodes) - 1;
  for (size_t k = 0; k < c.elements.size(); ++k) {
    if (c.elements[k].kind == ElementKind::kVoltageSource) branch[k] = size++;
  }
  Eigen::MatrixXd jacobian = Eigen::MatrixXd::Zero(size, size);
  Eigen::VectorXd rounding = Eigen::VectorXd::Zero(size);
  const auto row = [](int node) { return node - 1; };  // gnd: -1
  for (size_t k = 0; k < c.elements.size(); ++k) {
    const Element& e = c.elements[k];
    const int a = row(e.node_a);
    const int b = row(e.node_b);
    const double va = s.node_voltage[static_cast<size_t>(e.node_a)];
    const double vb = s.node_voltage[static_cast<size_t>(e.node_b)];
    const double i = s.element_current[k];
    if (e.kind == ElementKind::kVoltageSource) {
      const int j = branch[k];
      for (auto [n, sign] : {std::pair{a, 1.0}, std::pair{b, -1.0}}) {
        if (n < 0) continue;
        jacobian(n, j) += sign;
        jacobian(j, n) += sign;
        rounding(n) += 16 * kEps * std::fabs(i);
      }
      rounding(j) += 16 * kEps * (std::fabs(va) + std::fabs(vb) + std::fabs(e.value));
      continue;
    }
    const double g = SmallSignalConductance(c, e, s.junction_voltage[k]);
    const double terms = std::fabs(i) + g * (std::fabs(va) + std::fabs(vb));
    for (auto [n, sign] : {std::pair{a, 1.0}, std::pair{b, -1.0}}) {
      if (n < 0) continue;
      rounding(n) += 16 * kEps * terms;
      if (a >= 0) jacobian(n, a) += sign * g;
      if (b >= 0) jacobian(n, b) -= sign * g;
    }
  }
  std::vector<double> resolution(nodes, 0.0);
  // Conductances of 1e-25 S beside 1e3 S are real here: no rank threshold, and a node
  // whose row of the inverse is not finite is not fixed at all.
  Eigen::FullPivLU<Eigen::MatrixXd> lu(size, size);
  lu.setThreshold(std::numeric_limits<double>::min());
  lu.compute(jacobian);
  const Eigen::VectorXd bound = lu.inverse().cwiseAbs() * rounding;
  for (size_t n = 1; n < nodes; ++n) {
    const double r = bound(static_cast<Eigen::Index>(n) - 1);
    resolution[n] = std::isfinite(r) ? r : HUGE_VAL;
  }
  return resolution;
}

}  // namespace knee::torture
