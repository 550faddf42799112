// The derivatives of diode_sensitivity.h. Equations and their derivation are in
// docs/sensitivity.md, "The diode"; every derivative is written in terms of the law's
// evaluated currents and conductances (EvaluateJunction), not of its exponentials.
#include "diode_sensitivity.h"

#include <cmath>

namespace knee::internal {
namespace {

// The forward (Shockley) and breakdown terms of the junction law at vj, apart, with one
// evaluation each: the forward term is EvaluateJunction without the breakdown term; the
// breakdown term I_b = -ibr e^y, y = -(vj + vbr)/nbrVt, is the forward law of the
// mirrored junction (is = ibr, nVt = nbrVt) at y, whose conductance ibr e^y / nbrVt is
// g_b itself, and I_b = -g_b nbrVt.
struct SplitPoint {
  JunctionPoint forward, breakdown;
};
// `scales` is ScalesOf(d): the forward law's scale is its forward one, the mirrored law's
// its breakdown one.
SplitPoint Split(const DiodeConstants& d, const JunctionScales& scales, double vj) {
  DiodeConstants forward = d;
  forward.has_breakdown = false;
  SplitPoint s;
  s.forward = EvaluateJunction(forward, vj, JunctionScales{scales.forward, 0.0});
  if (d.has_breakdown) {
    DiodeConstants mirrored;
    mirrored.is = d.ibr;
    mirrored.n_vt = d.nbr_vt;
    const double g =
        EvaluateJunction(mirrored, -(vj + d.vbr), JunctionScales{scales.breakdown, 0.0})
            .conductance;
    s.breakdown = {-g * d.nbr_vt, g};
  }
  return s;
}

}  // namespace

DiodeLocalSlopes LocalSlopes(const DiodeConstants& d, double v, double guess) {
  DiodeLocalSlopes s;
  s.vj = JunctionVoltageAt(d, v, guess);
  const SplitPoint split = Split(d, ScalesOf(d), s.vj);
  const double i_f = split.forward.current, g_f = split.forward.conductance;
  const double i_b = split.breakdown.current, g_b = split.breakdown.conductance;
  const double i = i_f + i_b;
  const double g = g_f + g_b;
  s.current = i;
  s.rd = 1.0 / g + d.rs;
  // The junction current's partials at fixed vj (the law I_j(vj; c)):
  //   I_f = is (e^x - 1), x = vj/nVt:  dI/dis = I_f/is, dI/dnVt = -g_f vj/nVt;
  //   I_b = -ibr e^y, y = -(vj + vbr)/nbrVt:  dI/dibr = I_b/ibr, dI/dnbrVt = g_b y,
  //   dI/dvbr = g_b.
  ConstantSlopes pj{};
  pj[kIs] = i_f / d.is;
  pj[kNVt] = -g_f * s.vj / d.n_vt;
  const double y = d.has_breakdown ? -(s.vj + d.vbr) / d.nbr_vt : 0.0;
  if (d.has_breakdown) {
    pj[kIbr] = d.ibr > 0.0 ? i_b / d.ibr : 0.0;
    pj[kNbrVt] = g_b * y;
    pj[kVbr] = g_b;
  }
  // The conductance's partials at fixed vj, and its slope g' = dg/dvj:
  //   g_f = is e^x / nVt, g_b = ibr e^y / nbrVt.
  ConstantSlopes gj{};
  gj[kIs] = g_f / d.is;
  gj[kNVt] = -g_f * (s.vj / d.n_vt + 1.0) / d.n_vt;
  double g_slope = g_f / d.n_vt;
  if (d.has_breakdown) {
    gj[kIbr] = d.ibr > 0.0 ? g_b / d.ibr : 0.0;
    gj[kNbrVt] = -g_b * (y + 1.0) / d.nbr_vt;
    gj[kVbr] = -g_b / d.nbr_vt;
    g_slope -= g_b / d.nbr_vt;  // the breakdown term falls as vj rises
  }
  // At fixed terminal voltage v = vj + rs I: dI (1 + rs g) = dI_j|vj - g I drs, and
  // dvj = -rs dI - I drs.
  const double denominator = 1.0 + d.rs * g;
  s.di_dv = g / denominator;
  s.dvj_dv = 1.0 / denominator;
  for (int c = 0; c < kDiodeConstantCount; ++c) {
    if (c == kRs) {
      s.di[kRs] = -g * i / denominator;
      s.dvj[kRs] = -i / denominator;
    } else {
      s.di[static_cast<size_t>(c)] = pj[static_cast<size_t>(c)] / denominator;
      s.dvj[static_cast<size_t>(c)] = -d.rs * s.di[static_cast<size_t>(c)];
    }
  }
  // rd = 1/g(vj; c) + rs: d rd = -(g' dvj + dg|vj) / g^2 + drs.
  const double inv_g2 = 1.0 / (g * g);
  s.drd_dv = -g_slope * s.dvj_dv * inv_g2;
  for (size_t c = 0; c < static_cast<size_t>(kDiodeConstantCount); ++c) {
    s.drd[c] = -(g_slope * s.dvj[c] + gj[c]) * inv_g2 + (c == kRs ? 1.0 : 0.0);
  }
  return s;
}

ConstantSlopes CurrentSlopes(const DiodeConstants& d, const JunctionScales& scales, double v,
                             double guess) {
  const double vj = JunctionVoltageAt(d, v, guess);
  const SplitPoint split = Split(d, scales, vj);
  const double g = split.forward.conductance + split.breakdown.conductance;
  const double i = split.forward.current + split.breakdown.current;
  // As LocalSlopes: the partials at fixed vj over 1 + rs g, and -g I/(1 + rs g) for rs.
  // Without series resistance the quotient is 1/(1 + 0*g) = 1 exactly (g is finite).
  const double scale = d.rs == 0.0 && std::isfinite(g) ? 1.0 : 1.0 / (1.0 + d.rs * g);
  ConstantSlopes di{};
  di[kIs] = split.forward.current / d.is * scale;
  di[kNVt] = -split.forward.conductance * vj / d.n_vt * scale;
  di[kRs] = -g * i * scale;
  if (d.has_breakdown) {
    const double g_b = split.breakdown.conductance;
    di[kIbr] = d.ibr > 0.0 ? split.breakdown.current / d.ibr * scale : 0.0;
    di[kNbrVt] = g_b * (-(vj + d.vbr) / d.nbr_vt) * scale;
    di[kVbr] = g_b * scale;
  }
  return di;
}

ConstantJacobian ComputeConstantJacobian(const DiodeModel& model, double area,
                                         double temp_celsius) {
  const DiodeConstants d = ComputeDiodeConstants(model, area, temp_celsius);
  const double t = ToKelvin(temp_celsius);
  const double t0 = ToKelvin(model.ref_temp);
  const double n = model.ideality;
  const double vt = ThermalVoltage(t);
  const double vt0 = ThermalVoltage(t0);
  const double temp_exp = model.sat_temp_exp;
  const double eg_term = model.bandgap / (n * vt0);  // eV over V: a plain number
  // is = area Is0 exp(L), L = (temp_exp/n) ln(T/T0) + (Eg/(n Vt0)) (1 - T0/T).
  const double log_ratio = (temp_exp / n) * std::log(t / t0) + eg_term * (1.0 - t0 / t);
  ConstantJacobian j;
  const auto key = [&](ModelKey k) -> ConstantSlopes& { return j.key[static_cast<size_t>(k)]; };
  key(ModelKey::kSatCurrent)[kIs] = d.is / model.sat_current;
  key(ModelKey::kIdeality)[kIs] = -d.is * log_ratio / n;
  key(ModelKey::kIdeality)[kNVt] = vt;
  key(ModelKey::kBandgap)[kIs] = d.is * (1.0 - t0 / t) / (n * vt0);
  key(ModelKey::kSatTempExp)[kIs] = d.is * std::log(t / t0) / n;
  key(ModelKey::kRefTemp)[kIs] = d.is * (-temp_exp / (n * t0) - eg_term / t0);
  key(ModelKey::kSeriesRes)[kRs] = 1.0 / area;
  j.temp[kIs] = d.is * (temp_exp / (n * t) + eg_term * t0 / (t * t));
  j.temp[kNVt] = d.n_vt / t;
  if (d.has_breakdown) {
    const double bv = *model.breakdown_v;
    const double dt = temp_celsius - model.ref_temp;
    key(ModelKey::kBreakdownI)[kIbr] = area;
    key(ModelKey::kBreakdownIdeality)[kNbrVt] = vt;
    key(ModelKey::kBreakdownV)[kVbr] = 1.0 + model.breakdown_tc * dt;
    key(ModelKey::kBreakdownTc)[kVbr] = bv * dt;
    key(ModelKey::kRefTemp)[kVbr] = -bv * model.breakdown_tc;
    j.temp[kNbrVt] = d.nbr_vt / t;
    j.temp[kVbr] = bv * model.breakdown_tc;
  }
  return j;
}

ConstantSlopes ConstantsAreaSlopes(const DiodeConstants& d, double area) {
  ConstantSlopes s{};
  s[kIs] = d.is / area;
  s[kRs] = -d.rs / area;
  if (d.has_breakdown) s[kIbr] = d.ibr / area;
  return s;
}

void AddConstantSlopes(const Circuit& circuit, int element, const ConstantJacobian& jacobian,
                       const ConstantSlopes& area_slopes, const ConstantSlopes& s,
                       CircuitGradient* gradient) {
  const auto dot = [&](const ConstantSlopes& column) {
    double sum = 0.0;
    for (size_t c = 0; c < s.size(); ++c) sum += s[c] * column[c];
    return sum;
  };
  const Element& e = circuit.elements[static_cast<size_t>(element)];
  gradient->area[static_cast<size_t>(element)] += dot(area_slopes);
  auto& part = gradient->part[static_cast<size_t>(e.part)];
  for (size_t k = 0; k < part.size(); ++k) part[k] += dot(jacobian.key[k]);
  const double temp = dot(jacobian.temp);
  if (e.temp) {
    gradient->temp[static_cast<size_t>(element)] += temp;
  } else {
    gradient->circuit_temp += temp;
  }
}

}  // namespace knee::internal
