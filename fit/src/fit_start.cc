#include "fit_start.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <map>

#include "knee/diode_law.h"

namespace knee::fit_internal {
namespace {

using Group = std::vector<const FitPoint*>;

// Points of one kind (forward or breakdown) by temperature, each sorted by |i|.
std::map<double, Group> ByTemperature(const std::vector<const FitPoint*>& points) {
  std::map<double, Group> groups;
  for (const FitPoint* p : points) groups[p->temp].push_back(p);
  for (auto& [t, g] : groups) {
    std::sort(g.begin(), g.end(), [](const FitPoint* a, const FitPoint* b) {
      return std::fabs(a->i) < std::fabs(b->i);
    });
  }
  return groups;
}

// The group nearest the reference temperature.
const Group* NearestGroup(const std::map<double, Group>& groups, double ref_temp) {
  const Group* best = nullptr;
  double distance = 0;
  for (const auto& [t, g] : groups) {
    if (best == nullptr || std::fabs(t - ref_temp) < distance) {
      best = &g;
      distance = std::fabs(t - ref_temp);
    }
  }
  return best;
}

bool Free(const StartInput& in, FitKey key) { return in.free[Index(key)]; }

void StartForward(const StartInput& in, const std::map<double, Group>& forward, Params* x) {
  const double t0 = in.model.ref_temp;
  const Group* ref = NearestGroup(forward, t0);
  if (ref == nullptr || ref->empty()) return;
  const FitPoint& p1 = *ref->front();
  const double vt = ThermalVoltage(ToKelvin(p1.temp));
  double& n = (*x)[Index(FitKey::kIdeality)];
  if (Free(in, FitKey::kIdeality)) {
    if (ref->size() >= 2) {
      // The two-point rule: dV = n*Vt*ln(I2/I1) on the two lowest-current points.
      const FitPoint& p2 = *(*ref)[1];
      n = (p2.v - p1.v) / (vt * std::log(p2.i / p1.i));
    } else if (!Free(in, FitKey::kSatCurrent)) {
      const double is_t =
          std::exp((*x)[Index(FitKey::kSatCurrent)] + PointLaw(*x, false, p1.temp, t0).ln_is_shift);
      n = p1.v / (vt * std::log1p(p1.i / is_t));
    }
    if (!std::isfinite(n) || n < 0.3 || n > 20)
      n = std::clamp(std::isfinite(n) ? n : 1.0, 0.3, 20.0);
  }
  if (Free(in, FitKey::kSatCurrent)) {
    const double is_t = p1.i / std::expm1(p1.v / (n * vt));
    (*x)[Index(FitKey::kSatCurrent)] =
        std::log(is_t) - PointLaw(*x, false, p1.temp, t0).ln_is_shift;
  }
  if (Free(in, FitKey::kSeriesRes)) {
    // The departure of the highest-current point from the exponential through the lowest.
    const FitPoint& top = *ref->back();
    Params no_rs = *x;
    no_rs[Index(FitKey::kSeriesRes)] = 0;
    const PointLaw law(no_rs, false, top.temp, t0);
    const double excess = top.v - law.JunctionCarrying(top.i);
    (*x)[Index(FitKey::kSeriesRes)] =
        excess > 0 ? excess / top.i : 1e-3 * law.n_vt / std::max(top.i, 1e-300);
  }
}

// bandgap and sat_temp_exp (and sat_current when no group sits at the reference
// temperature) from the saturation current each temperature's lowest point implies, by
// linear least squares of n*ln Is(T) = n*ln Is(T0) + temp_exp*ln(T/T0) + (Eg/Vt0)*(1 - T0/T).
void StartTemperature(const StartInput& in, const std::map<double, Group>& forward, Params* x) {
  const bool eg = Free(in, FitKey::kBandgap), temp_exp = Free(in, FitKey::kSatTempExp);
  if ((!eg && !temp_exp) || forward.size() < 2) return;
  const double n = (*x)[Index(FitKey::kIdeality)];
  const double t0k = ToKelvin(in.model.ref_temp);
  const double vt0 = ThermalVoltage(t0k);
  std::vector<int> unknowns = {Index(FitKey::kSatCurrent)};
  if (eg) unknowns.push_back(Index(FitKey::kBandgap));
  if (temp_exp) unknowns.push_back(Index(FitKey::kSatTempExp));
  if (forward.size() < unknowns.size()) unknowns.pop_back();  // sat_temp_exp stays
  const bool temp_exp_in = unknowns.back() == Index(FitKey::kSatTempExp);
  Eigen::MatrixXd a(static_cast<Eigen::Index>(forward.size()),
                    static_cast<Eigen::Index>(unknowns.size()));
  Eigen::VectorXd y(a.rows());
  Eigen::Index row = 0;
  for (const auto& [t, g] : forward) {
    const FitPoint& p = *g.front();
    const double tk = ToKelvin(t);
    const double vt = ThermalVoltage(tk);
    const double ln_is_t = std::log(p.i / std::expm1(p.v / (n * vt)));
    double rhs = n * ln_is_t;
    for (Eigen::Index c = 0; c < a.cols(); ++c) {
      const int k = unknowns[static_cast<size_t>(c)];
      a(row, c) = k == Index(FitKey::kSatCurrent) ? n
                  : k == Index(FitKey::kBandgap)  ? (1 - t0k / tk) / vt0
                                                  : std::log(tk / t0k);
    }
    if (!eg) rhs -= (*x)[Index(FitKey::kBandgap)] * (1 - t0k / tk) / vt0;
    if (!temp_exp_in) rhs -= (*x)[Index(FitKey::kSatTempExp)] * std::log(tk / t0k);
    y(row++) = rhs;
  }
  const Eigen::VectorXd s = a.colPivHouseholderQr().solve(y);
  for (Eigen::Index c = 0; c < s.size(); ++c) {
    if (!std::isfinite(s(c))) return;
  }
  for (Eigen::Index c = 0; c < s.size(); ++c) {
    const int k = unknowns[static_cast<size_t>(c)];
    if (k == Index(FitKey::kSatCurrent) && !Free(in, FitKey::kSatCurrent)) continue;
    (*x)[k] = s(c);
  }
  if (eg) (*x)[Index(FitKey::kBandgap)] = std::clamp((*x)[Index(FitKey::kBandgap)], 0.1, 5.0);
}

void StartBreakdown(const StartInput& in, const std::vector<const FitPoint*>& reverse, Params* x) {
  const double t0 = in.model.ref_temp;
  std::vector<const FitPoint*> breakdown;
  for (const FitPoint* p : reverse) {
    if (IsBreakdownPoint(*x, t0, *p)) breakdown.push_back(p);
  }
  const std::map<double, Group> groups = ByTemperature(breakdown);
  const Group* ref = NearestGroup(groups, t0);
  if (ref == nullptr) return;
  const double rs = (*x)[Index(FitKey::kSeriesRes)];
  auto junction = [rs](const FitPoint& p) { return p.v - p.i * rs; };
  double& nbr = (*x)[Index(FitKey::kBreakdownIdeality)];
  if (Free(in, FitKey::kBreakdownIdeality) && ref->size() >= 2) {
    const FitPoint& p1 = *ref->front();
    const FitPoint& p2 = *ref->back();
    const double vt = ThermalVoltage(ToKelvin(p1.temp));
    nbr = (junction(p1) - junction(p2)) / (vt * std::log(p2.i / p1.i));
    if (!std::isfinite(nbr) || nbr < 0.05) nbr = 1;
  }
  // Vbr(T) at each temperature from its point nearest breakdown_i:
  // |i| = Ibr*exp((-Vj - Vbr)/(nbr*Vt)), so Vbr = -Vj - nbr*Vt*ln(|i|/Ibr).
  const double ln_ibr = (*x)[Index(FitKey::kBreakdownI)];
  auto nearest = [&](const Group& g) {
    const FitPoint* best = g.front();
    for (const FitPoint* p : g) {
      if (std::fabs(std::log(-p->i) - ln_ibr) < std::fabs(std::log(-best->i) - ln_ibr)) best = p;
    }
    return best;
  };
  if (Free(in, FitKey::kBreakdownI)) {
    const FitPoint& p = *nearest(*ref);
    const PointLaw law(*x, true, p.temp, t0);
    (*x)[Index(FitKey::kBreakdownI)] = std::log(-p.i) + (junction(p) + law.vbr_t) / (nbr * law.vt);
    return;
  }
  std::vector<std::pair<double, double>> vbr;  // (T - T0, Vbr(T))
  for (const auto& [t, g] : groups) {
    const FitPoint& p = *nearest(g);
    const double vt = ThermalVoltage(ToKelvin(t));
    vbr.emplace_back(t - t0, -junction(p) - nbr * vt * (std::log(-p.i) - ln_ibr));
  }
  const bool bv = Free(in, FitKey::kBreakdownV), tc = Free(in, FitKey::kBreakdownTc);
  if (tc && vbr.size() >= 2 && bv) {
    // Vbr(T) = bv + (bv*tc)*(T - T0): a straight line through the temperatures.
    double st = 0, sv = 0, stt = 0, stv = 0;
    for (const auto& [dt, v] : vbr) {
      st += dt, sv += v, stt += dt * dt, stv += dt * v;
    }
    const double m = static_cast<double>(vbr.size());
    const double slope = (m * stv - st * sv) / (m * stt - st * st);
    const double b0 = (sv - slope * st) / m;
    (*x)[Index(FitKey::kBreakdownV)] = b0;
    (*x)[Index(FitKey::kBreakdownTc)] = slope / b0;
  } else if (bv) {
    const auto near = std::min_element(vbr.begin(), vbr.end(), [](const auto& a, const auto& b) {
      return std::fabs(a.first) < std::fabs(b.first);
    });
    (*x)[Index(FitKey::kBreakdownV)] =
        near->second / (1 + (*x)[Index(FitKey::kBreakdownTc)] * near->first);
  }
}

}  // namespace

bool IsBreakdownPoint(const Params& x, double ref_temp, const FitPoint& p) {
  if (!(p.v < 0)) return false;
  const PointLaw law(x, false, p.temp, ref_temp);
  return -p.i > kLeakageFactor * law.is_t;
}

Params StartValues(const StartInput& in) {
  Params x = ToParams(in.model);
  if (!in.model.breakdown_v) x[Index(FitKey::kBreakdownV)] = 0;
  std::vector<const FitPoint*> forward, reverse;
  for (const FitPoint& p : *in.points) (p.v > 0 ? forward : reverse).push_back(&p);
  const std::map<double, Group> by_temp = ByTemperature(forward);
  StartForward(in, by_temp, &x);
  StartTemperature(in, by_temp, &x);
  if (in.breakdown) StartBreakdown(in, reverse, &x);
  return x;
}

}  // namespace knee::fit_internal
