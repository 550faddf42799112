// Self-heating: the thermal balance of heated diodes, solved by Newton on the reduced
// coupled system with continuation in the thermal coupling (thermal.h, docs/thermal.md).
#include "thermal.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>

#include "bias_impl.h"
#include "knee/diode_law.h"
#include "knee/sensitivity.h"

namespace knee {

using internal::HeatedDiode;
using internal::ThermalState;

namespace internal {

std::vector<HeatedDiode> HeatedDiodes(const Circuit& circuit) {
  std::vector<HeatedDiode> out;
  if (circuit.sink_mounts.empty() &&
      std::none_of(circuit.parts.begin(), circuit.parts.end(),
                   [](const Part& p) { return p.model.thermal_res.has_value(); })) {
    return out;  // the common case costs no pass over the elements
  }
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    const int element = static_cast<int>(e);
    if (!circuit.SelfHeated(element)) continue;
    const Element& d = circuit.elements[e];
    const DiodeModel& model = circuit.parts[static_cast<size_t>(d.part)].model;
    out.push_back({element, circuit.SinkOf(element), model.thermal_res.value_or(0.0)});
  }
  return out;
}

bool RefreshNumbers(const Circuit& from, Circuit* to) {
  const bool same =
      from.nodes.size() == to->nodes.size() && from.elements.size() == to->elements.size() &&
      from.parts.size() == to->parts.size() && from.heatsinks.size() == to->heatsinks.size() &&
      from.sink_mounts.size() == to->sink_mounts.size();
  if (!same) {
    *to = from;
    return false;
  }
  to->temp = from.temp;
  for (size_t i = 0; i < from.elements.size(); ++i) {
    const Element& a = from.elements[i];
    Element& b = to->elements[i];
    b.value = a.value;
    b.area = a.area;
    b.temp = a.temp;
    b.node_a = a.node_a;
    b.node_b = a.node_b;
    b.part = a.part;
    b.kind = a.kind;
  }
  for (size_t i = 0; i < from.parts.size(); ++i) to->parts[i].model = from.parts[i].model;
  for (size_t i = 0; i < from.heatsinks.size(); ++i) {
    to->heatsinks[i].thermal_res = from.heatsinks[i].thermal_res;
  }
  to->sink_mounts = from.sink_mounts;
  return true;
}

}  // namespace internal

namespace {

double Kelvin(double celsius) { return celsius + kZeroCelsius; }

// The sink-to-ambient resistance above diode d (0 without a sink).
double SinkRes(const Circuit& c, const HeatedDiode& d) {
  return d.sink < 0 ? 0.0 : c.heatsinks[static_cast<size_t>(d.sink)].thermal_res;
}

}  // namespace

// The heated diodes and their thermal resistances are read again at every new set of
// values: a sweep or spread may change a part's thermal_res (PART.thermal_res).
static void SetDiodes(const Circuit& c, std::vector<HeatedDiode> diodes, ThermalState* t) {
  t->user = &c;
  t->diodes = std::move(diodes);
  const size_t h = t->diodes.size();
  t->temp.assign(h, c.temp);
  t->power.assign(h, 0.0);
  t->balance.assign(h, 0.0);
  t->jacobian.assign(h * h, 0.0);
  t->sink_power.assign(c.heatsinks.size(), 0.0);
}

void BiasSolver::Impl::StartThermal(const Circuit& c) {
  std::vector<HeatedDiode> diodes = internal::HeatedDiodes(c);
  if (diodes.empty()) return;
  thermal = std::make_unique<ThermalState>();
  ThermalState& t = *thermal;
  t.heated = c;
  SetDiodes(c, std::move(diodes), &t);
  for (const HeatedDiode& d : t.diodes) {
    t.heated.elements[static_cast<size_t>(d.element)].temp = c.temp;
  }
  Update(t.heated);
}

void BiasSolver::Impl::UpdateThermal(const Circuit& c) {
  ThermalState& t = *thermal;
  std::vector<HeatedDiode> diodes = internal::HeatedDiodes(c);
  const bool same = diodes.size() == t.diodes.size() &&
                    std::equal(diodes.begin(), diodes.end(), t.diodes.begin(),
                               [](const HeatedDiode& a, const HeatedDiode& b) {
                                 return a.element == b.element && a.sink == b.sink;
                               });
  if (same) {
    t.diodes = std::move(diodes);  // new thermal resistances, same unknowns
    t.user = &c;
  } else {
    // Other diodes are heated now (a temp= was given or removed): the elements whose
    // temp= the copy took over are restored from `c` by the next refresh.
    SetDiodes(c, std::move(diodes), &t);
  }
  t.converged = false;
  last_converged = false;
}

int BiasSolver::Impl::ThermalCount() const { return static_cast<int>(thermal->diodes.size()); }

std::span<const double> BiasSolver::Impl::ThermalUnknowns() const {
  if (thermal->diodes.empty()) return converged;
  if (!thermal->converged) return {};
  return thermal->unknowns;
}

SolveSummary BiasSolver::Impl::SolveAtTemps(std::span<const double> temps,
                                            std::span<const double> estart, bool allow_aids,
                                            Solution* solution) {
  ThermalState& t = *thermal;
  for (size_t i = 0; i < t.diodes.size(); ++i) {
    t.heated.elements[static_cast<size_t>(t.diodes[i].element)].temp = temps[i];
  }
  Update(t.heated);
  return SolveFixed(solution, estart, allow_aids);
}

// F_i = T_i - T_a - s (thermal_res_i P_i + R_sink sum of P on the sink), from *solution.
static double Balance(const Circuit& c, ThermalState& t, double s, const Solution& solution) {
  std::fill(t.sink_power.begin(), t.sink_power.end(), 0.0);
  for (size_t i = 0; i < t.diodes.size(); ++i) {
    const auto e = static_cast<size_t>(t.diodes[i].element);
    t.power[i] = solution.element_voltage[e] * solution.element_current[e];
    if (t.diodes[i].sink >= 0) t.sink_power[static_cast<size_t>(t.diodes[i].sink)] += t.power[i];
  }
  double worst = 0.0;
  for (size_t i = 0; i < t.diodes.size(); ++i) {
    const HeatedDiode& d = t.diodes[i];
    const double sink = d.sink < 0 ? 0.0 : t.sink_power[static_cast<size_t>(d.sink)];
    t.balance[i] = t.temp[i] - c.temp - s * (d.thermal_res * t.power[i] + SinkRes(c, d) * sink);
    worst = std::max(worst, std::fabs(t.balance[i]) / Kelvin(t.temp[i]));
  }
  return worst;
}

bool BiasSolver::Impl::ThermalJacobian(double s) {
  ThermalState& t = *thermal;
  const size_t h = t.diodes.size();
  // dP/dT: row k holds dP_k/dT_j, one adjoint solve per heated diode.
  t.power_slope.assign(h * h, 0.0);
  for (size_t k = 0; k < h; ++k) {
    const WeightedQuantity q{{QuantityKind::kElementPower, t.diodes[k].element}, 1.0};
    if (!Gradient({&q, 1}, &t.gradient).ok()) return false;
    for (size_t j = 0; j < h; ++j) {
      t.power_slope[k * h + j] = t.gradient.temp[static_cast<size_t>(t.diodes[j].element)];
    }
  }
  const Circuit& c = *t.user;
  for (size_t i = 0; i < h; ++i) {
    const HeatedDiode& d = t.diodes[i];
    for (size_t j = 0; j < h; ++j) {
      double heat = d.thermal_res * t.power_slope[i * h + j];
      if (d.sink >= 0) {
        for (size_t k = 0; k < h; ++k) {
          if (t.diodes[k].sink == d.sink) heat += SinkRes(c, d) * t.power_slope[k * h + j];
        }
      }
      t.jacobian[i * h + j] = (i == j ? 1.0 : 0.0) - s * heat;
    }
  }
  return true;
}

namespace {

using Matrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

Eigen::Map<const Matrix> JacobianOf(const ThermalState& t) {
  const auto h = static_cast<Eigen::Index>(t.diodes.size());
  return Eigen::Map<const Matrix>(t.jacobian.data(), h, h);
}

}  // namespace

bool BiasSolver::Impl::RunBalance(double s, bool allow_aids, Solution* solution, SolveSummary* last,
                                  int* iterations) {
  ThermalState& t = *thermal;
  const internal::ThermalTuning& tune = t.tuning;
  const size_t h = t.diodes.size();
  double last_step = std::numeric_limits<double>::infinity();
  for (int it = 0; it < tune.max_iterations; ++it) {
    const int steps_before = t.newton_steps;
    *last = SolveAtTemps(t.temp, t.electrical_start, allow_aids, solution);
    t.newton_steps = steps_before + last->newton_steps;
    ++*iterations;
    if (last->status != SolveStatus::kConverged) return false;
    t.electrical_start.assign(converged.begin(), converged.end());
    const double worst = Balance(*t.user, t, s, *solution);
    if (worst <= tune.balance_rel || last_step <= tune.step_rel) return true;
    if (!ThermalJacobian(s)) return false;
    Eigen::Map<const Eigen::VectorXd> f(t.balance.data(), static_cast<Eigen::Index>(h));
    const Eigen::VectorXd dt = JacobianOf(t).fullPivLu().solve(-f);
    double largest = 0.0;
    for (Eigen::Index i = 0; i < dt.size(); ++i) {
      if (!std::isfinite(dt[i])) return false;
      largest = std::max(largest, std::fabs(dt[i]));
    }
    const double scale = largest > tune.max_step ? tune.max_step / largest : 1.0;
    last_step = 0.0;
    for (size_t i = 0; i < h; ++i) {
      t.temp[i] += scale * dt[static_cast<Eigen::Index>(i)];
      if (!(t.temp[i] > -kZeroCelsius + 1.0 && t.temp[i] < tune.hottest)) return false;
      last_step = std::max(last_step,
                           scale * std::fabs(dt[static_cast<Eigen::Index>(i)]) / Kelvin(t.temp[i]));
    }
  }
  return false;
}

// g(T) = T_a + (thermal_res + R_sink) P(T) - T of the one heated diode, P at fixed T, is
// 0 at the balance found and falls above a stable one; where it rises back above 0 the
// dissipation overtakes the thermal path again: another balance (the first of them an
// unstable one). The bracket is narrowed by bisection to a hundredth of the scan step.
double BiasSolver::Impl::SeekOtherBalance(double temp) {
  ThermalState& t = *thermal;
  const internal::ThermalTuning& tune = t.tuning;
  const HeatedDiode& d = t.diodes[0];
  const double path = d.thermal_res + SinkRes(*t.user, d);
  const double ambient = t.user->temp;
  const auto e = static_cast<size_t>(d.element);
  std::vector<double> from(t.unknowns.begin(), t.unknowns.end() - 1);
  Solution at;
  double at_temp = 0.0;
  const auto g = [&](double temp_c, double* value) {
    at_temp = temp_c;
    const SolveSummary s = SolveAtTemps({&at_temp, 1}, from, true, &at);
    if (s.status != SolveStatus::kConverged) return false;
    from.assign(converged.begin(), converged.end());
    *value = ambient + path * at.element_voltage[e] * at.element_current[e] - temp_c;
    return true;
  };
  double lo = temp;
  for (double hi = temp + tune.scan_step; hi <= tune.scan_limit; hi += tune.scan_step) {
    double value = 0.0;
    if (!g(hi, &value)) return std::numeric_limits<double>::quiet_NaN();
    if (value > 0.0) {
      for (int k = 0; k < 7; ++k) {
        const double mid = 0.5 * (lo + hi);
        if (!g(mid, &value)) break;
        (value > 0.0 ? hi : lo) = mid;
      }
      last_converged = false;
      return 0.5 * (lo + hi);
    }
    lo = hi;
  }
  last_converged = false;
  return std::numeric_limits<double>::quiet_NaN();
}

SolveSummary BiasSolver::Impl::SolveHeated(Solution* solution, std::span<const double> from,
                                           bool allow_aids) {
  ThermalState& t = *thermal;
  const internal::ThermalTuning& tune = t.tuning;
  const size_t h = t.diodes.size();
  t.converged = false;
  internal::RefreshNumbers(*t.user, &t.heated);
  if (h == 0) {  // values under which no diode is heated any more
    last_converged = false;
    Update(t.heated);
    return SolveFixed(solution, from, allow_aids);
  }
  const double ambient = t.user->temp;
  // The electrical size as it will be at the first bias point (Update may rebuild).
  for (const HeatedDiode& d : t.diodes) {
    t.heated.elements[static_cast<size_t>(d.element)].temp = ambient;
  }
  Update(t.heated);
  const size_t n = static_cast<size_t>(mna.size());
  const bool warm_start = from.size() == n + h;
  for (size_t i = 0; i < h; ++i) {
    t.temp[i] =
        warm_start ? std::clamp(from[n + i], -kZeroCelsius + 1.0, tune.hottest - 1.0) : ambient;
  }
  if (warm_start) {
    t.electrical_start.assign(from.begin(), from.begin() + static_cast<std::ptrdiff_t>(n));
  } else {
    t.electrical_start.assign(from.begin(), from.end());
  }
  const std::vector<double> first_start = t.electrical_start;
  t.newton_steps = 0;
  SolveSummary last;
  int iterations = 0;
  bool ok = RunBalance(1.0, allow_aids, solution, &last, &iterations);
  std::vector<std::string> aids;
  double s_end = 1.0;
  if (!ok) {
    // Continuation in the coupling s from the isothermal point (s = 0).
    std::fill(t.temp.begin(), t.temp.end(), ambient);
    t.electrical_start = first_start;
    if (!RunBalance(0.0, allow_aids, solution, &last, &iterations)) {
      last.newton_steps = t.newton_steps;
      last.heated = true;
      last.thermal_iterations = iterations;
      return last;  // the isothermal bias point itself fails
    }
    t.saved_temp = t.temp;
    t.saved_electrical = t.electrical_start;
    double s_lo = 0.0;
    double ds = tune.first_coupling_step;
    while (s_lo < 1.0) {
      const double s_try = std::min(1.0, s_lo + ds);
      t.temp = t.saved_temp;
      t.electrical_start = t.saved_electrical;
      if (RunBalance(s_try, allow_aids, solution, &last, &iterations)) {
        s_lo = s_try;
        t.saved_temp = t.temp;
        t.saved_electrical = t.electrical_start;
        ds *= 2.0;
        continue;
      }
      ds *= 0.5;
      if (ds < tune.min_coupling_step * std::max(s_lo, 1e-3)) break;
    }
    s_end = s_lo;
    ok = s_lo >= 1.0;
    if (ok) aids.push_back("thermal continuation");
  }
  SolveSummary s = last;
  s.newton_steps = t.newton_steps;
  s.heated = true;
  s.unique = false;  // the co-content argument does not cover the coupled system
  s.thermal_iterations = iterations;
  for (std::string& aid : aids) s.aids.push_back(std::move(aid));
  if (ok) {
    // The reported point is the last bias point of the balance at s = 1.
    double worst = -1.0;
    for (size_t i = 0; i < h; ++i) {
      if (std::fabs(t.balance[i]) > worst) {
        worst = std::fabs(t.balance[i]);
        s.thermal_worst = t.user->elements[static_cast<size_t>(t.diodes[i].element)].name;
      }
    }
    s.max_thermal_residual = worst;
    for (size_t k = 0; k < t.user->heatsinks.size(); ++k) {
      solution->sink_temp[k] = ambient + t.user->heatsinks[k].thermal_res * t.sink_power[k];
    }
    t.unknowns.assign(converged.begin(), converged.end());
    t.unknowns.insert(t.unknowns.end(), t.temp.begin(), t.temp.end());
    t.converged = true;
    if (options.seek_other_balance && h == 1) s.other_balance_temp = SeekOtherBalance(t.temp[0]);
    return s;
  }
  // The branch from the isothermal point ends below s = 1. At its last point, a nearly
  // singular J (det J = prod(1 - s lambda_k) -> 0) is a fold: no balance beyond it.
  t.temp = t.saved_temp;
  t.electrical_start = t.saved_electrical;
  Solution at_end;
  SolveSummary end = SolveAtTemps(t.temp, t.electrical_start, allow_aids, &at_end);
  bool fold = false;
  size_t culprit = 0;
  if (end.status == SolveStatus::kConverged) {
    Balance(*t.user, t, s_end, at_end);
    if (ThermalJacobian(s_end)) {
      const auto lu = JacobianOf(t).fullPivLu();
      fold = std::fabs(lu.determinant()) < tune.fold_det;
      // The direction the balance is lost in: J^-1 (1, ..., 1) is dominated by J's null
      // vector near a fold; its largest entry names the diode.
      const Eigen::VectorXd v = lu.solve(Eigen::VectorXd::Ones(static_cast<Eigen::Index>(h)));
      double largest = -1.0;
      for (size_t i = 0; i < h; ++i) {
        const double a = std::fabs(v[static_cast<Eigen::Index>(i)]);
        if (std::isfinite(a) && a > largest) {
          largest = a;
          culprit = i;
        }
      }
    }
  }
  last_converged = false;
  if (!fold) {
    s.status = last.status == SolveStatus::kConverged ? SolveStatus::kNoConvergence : last.status;
    s.detail = fmt::format(
        "no thermal balance found: the coupling reached {:.6g} of the circuit's thermal "
        "resistances, then {}",
        s_end,
        last.status == SolveStatus::kConverged ? "the thermal Newton iteration stalled"
                                               : "a bias point failed: " + last.detail);
    return s;
  }
  const HeatedDiode& d = t.diodes[culprit];
  const std::string& name = t.user->elements[static_cast<size_t>(d.element)].name;
  const double path = d.thermal_res + SinkRes(*t.user, d);
  s.status = SolveStatus::kThermalRunaway;
  s.thermal_worst = name;
  s.runaway_temp = t.temp[culprit];
  s.critical_thermal_res = s_end * path;
  const bool several = h > 1 || d.sink >= 0;
  s.detail = fmt::format(
      "{} loses its thermal balance at Tj = {:.4g} C (ambient {:.4g} C); its "
      "dissipation grows faster with temperature than its thermal path removes it. The critical "
      "thermal_res is {:.6g} K/W{}; the circuit has {:.6g} K/W",
      name, s.runaway_temp, ambient, s.critical_thermal_res,
      several ? " junction to ambient, with every thermal resistance scaled alike" : "", path);
  return s;
}

}  // namespace knee
