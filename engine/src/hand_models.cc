// The straight-line diode models of hand calculation and the points of the exact curve
// they are fitted to (docs/hand-models.md).
#include <fmt/format.h>

#include <cmath>
#include <limits>

#include "check.h"
#include "knee/diode_law.h"
#include "knee/hand.h"

namespace knee {
namespace {

const DiodeModel& PartOf(const Circuit& circuit, const Element& e) {
  KNEE_CHECK(e.kind == ElementKind::kDiode && e.part >= 0 &&
             e.part < static_cast<int>(circuit.parts.size()));
  return circuit.parts[static_cast<size_t>(e.part)].model;
}

DiodeConstants ConstantsOf(const Circuit& circuit, const Element& e) {
  return ComputeDiodeConstants(PartOf(circuit, e), e.area, circuit.DeviceTemp(e));
}

HandModel LineModel(const Circuit& circuit, HandModelKind kind, double drop, double res,
                    std::string description) {
  HandModel model;
  model.kind = kind;
  model.description = std::move(description);
  model.lines.resize(circuit.elements.size());
  for (size_t i = 0; i < circuit.elements.size(); ++i) {
    const Element& e = circuit.elements[i];
    if (e.kind != ElementKind::kDiode) continue;
    DiodeLines& l = model.lines[i];
    l.on_voltage = drop;
    l.on_res = res;
    const DiodeModel& part = PartOf(circuit, e);
    if (part.breakdown_v) {
      l.has_breakdown = true;
      l.breakdown_voltage = BreakdownVoltageAt(part, circuit.DeviceTemp(e));
      l.breakdown_res = res;
    }
  }
  return model;
}

Diagnostic Problem(const SourceLocation& where, std::string message) {
  Diagnostic d;
  d.where = where;
  d.message = std::move(message);
  return d;
}

}  // namespace

const char* ToString(DiodeState state) {
  switch (state) {
    case DiodeState::kOff:
      return "off";
    case DiodeState::kOn:
      return "on";
    case DiodeState::kBreakdown:
      return "breakdown";
  }
  return "?";
}

const char* ToString(HandModelKind kind) {
  switch (kind) {
    case HandModelKind::kIdeal:
      return "ideal";
    case HandModelKind::kConstantDrop:
      return "drop";
    case HandModelKind::kPiecewiseLinear:
      return "pwl";
  }
  return "?";
}

HandModel MakeIdealModel(const Circuit& circuit) {
  return LineModel(circuit, HandModelKind::kIdeal, 0.0, 0.0, "0 V on, open off");
}

HandModel MakeConstantDropModel(const Circuit& circuit, double drop) {
  return LineModel(circuit, HandModelKind::kConstantDrop, drop, 0.0,
                   fmt::format("{:g} V on, open off", drop));
}

HandModel MakeDropResistanceModel(const Circuit& circuit, double drop, double on_res) {
  return LineModel(circuit, HandModelKind::kPiecewiseLinear, drop, on_res,
                   fmt::format("{:g} V plus {:g} Ohm on, open off", drop, on_res));
}

Result<CurvePoint> PointAtCurrent(const Circuit& circuit, int element, double current) {
  KNEE_CHECK(element >= 0 && element < static_cast<int>(circuit.elements.size()));
  const Element& e = circuit.elements[static_cast<size_t>(element)];
  const DiodeConstants d = ConstantsOf(circuit, e);
  if (!std::isfinite(current)) {
    return Problem(e.where, fmt::format("diode '{}': current {} is not finite", e.name, current));
  }
  auto at = [&](double vj) { return EvaluateJunction(d, vj).current; };
  // The junction current is strictly increasing in vj: bracket the target, then bisect.
  double lo = 0, hi = 0;
  if (at(0.0) < current) {
    double step = d.n_vt;
    hi = step;
    while (at(hi) < current) {
      lo = hi;
      step *= 2;
      hi += step;
      if (hi > 1e6) {
        return Problem(e.where,
                       fmt::format("diode '{}': no forward voltage carries {} A", e.name, current));
      }
    }
  } else {
    double step = d.has_breakdown ? d.nbr_vt : d.n_vt;
    lo = -step;
    while (at(lo) > current) {
      hi = lo;
      step *= 2;
      lo -= step;
      if (lo < -1e6) {
        return Problem(
            e.where, fmt::format("diode '{}': the reverse branch never carries {} A{}", e.name,
                                 current, d.has_breakdown ? "" : " (its part has no breakdown_v)"));
      }
    }
  }
  for (int i = 0; i < 200 && hi - lo > 1e-15 * (1 + std::fabs(lo)); ++i) {
    const double mid = 0.5 * (lo + hi);
    (at(mid) < current ? lo : hi) = mid;
  }
  const double vj = 0.5 * (lo + hi);
  const JunctionPoint p = EvaluateJunction(d, vj);
  CurvePoint point;
  point.voltage = vj + current * d.rs;
  point.slope = 1.0 / p.conductance + d.rs;
  return point;
}

Result<HandModel> MakeTangentModel(const Circuit& circuit, const std::vector<double>& current) {
  KNEE_CHECK(current.size() == circuit.elements.size());
  HandModel model;
  model.kind = HandModelKind::kPiecewiseLinear;
  model.description = "tangent to the exact curve";
  model.lines.resize(circuit.elements.size());
  std::vector<Diagnostic> errors;
  for (size_t i = 0; i < circuit.elements.size(); ++i) {
    const Element& e = circuit.elements[i];
    if (e.kind != ElementKind::kDiode) continue;
    const double at = current[i];
    if (!(at > 0) || !std::isfinite(at)) {
      errors.push_back(Problem(
          e.where,
          fmt::format("diode '{}': the tangent needs a forward current > 0, not {}", e.name, at)));
      continue;
    }
    DiodeLines& l = model.lines[i];
    Result<CurvePoint> forward = PointAtCurrent(circuit, static_cast<int>(i), at);
    if (!forward) {
      for (const Diagnostic& d : forward.errors()) errors.push_back(d);
      continue;
    }
    // V = V0 + r (I - I0) = (V0 - r I0) + r I
    l.on_res = forward->slope;
    l.on_voltage = forward->voltage - forward->slope * at;
    const DiodeModel& part = PartOf(circuit, e);
    if (part.breakdown_v) {
      Result<CurvePoint> reverse = PointAtCurrent(circuit, static_cast<int>(i), -at);
      if (!reverse) {
        for (const Diagnostic& d : reverse.errors()) errors.push_back(d);
        continue;
      }
      l.has_breakdown = true;
      l.breakdown_res = reverse->slope;
      // V = V0 + r (I - I0) with I0 = -at: intercept at I = 0 is V0 + r at = -Vbr_line
      l.breakdown_voltage = -(reverse->voltage + reverse->slope * at);
    }
  }
  if (!errors.empty()) return errors;
  return model;
}

DiodeState ExactState(const Circuit& circuit, int element, double junction_voltage) {
  const Element& e = circuit.elements[static_cast<size_t>(element)];
  const DiodeConstants d = ConstantsOf(circuit, e);
  if (junction_voltage > kConductingVt * d.n_vt) return DiodeState::kOn;
  if (d.has_breakdown && junction_voltage < -d.vbr + kConductingVt * d.nbr_vt) {
    return DiodeState::kBreakdown;
  }
  return DiodeState::kOff;
}

double JunctionResistance(const Circuit& circuit, int element, const Solution& exact) {
  const Element& e = circuit.elements[static_cast<size_t>(element)];
  const DiodeConstants d = ConstantsOf(circuit, e);
  const double i = exact.element_current[static_cast<size_t>(element)];
  const DiodeState s =
      ExactState(circuit, element, exact.junction_voltage[static_cast<size_t>(element)]);
  if (s == DiodeState::kOff || i == 0) return std::numeric_limits<double>::quiet_NaN();
  return (s == DiodeState::kOn ? d.n_vt : d.nbr_vt) / std::fabs(i);
}

std::optional<std::string> Validate(const HandSettings& settings) {
  if (!(settings.drop >= 0 && settings.drop <= 100)) {
    return fmt::format("HandSettings.drop = {} V: must be in [0, 100] V", settings.drop);
  }
  if (settings.on_res && !(*settings.on_res >= 0)) {
    return fmt::format("HandSettings.on_res = {} Ohm: must be >= 0", *settings.on_res);
  }
  if (settings.fit_at && !(*settings.fit_at > 0)) {
    return fmt::format("HandSettings.fit_at = {} A: must be a forward current > 0",
                       *settings.fit_at);
  }
  if (settings.on_res && settings.fit_at) {
    return "HandSettings.on_res and fit_at both set the piecewise-linear model; give one";
  }
  return std::nullopt;
}

Result<HandModel> MakePiecewiseModel(const Circuit& circuit, const HandSettings& settings) {
  if (settings.fit_at) {
    return MakeTangentModel(circuit,
                            std::vector<double>(circuit.elements.size(), *settings.fit_at));
  }
  if (settings.on_res) return MakeDropResistanceModel(circuit, settings.drop, *settings.on_res);
  HandModel m = MakeDropResistanceModel(circuit, settings.drop, 0.0);
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    const Element& el = circuit.elements[e];
    if (el.kind != ElementKind::kDiode) continue;
    const double rs = PartOf(circuit, el).series_res / el.area;
    m.lines[e].on_res = rs;
    m.lines[e].breakdown_res = rs;
  }
  return m;
}

Result<std::vector<HandModel>> MakeHandModels(const Circuit& circuit,
                                              const HandSettings& settings) {
  Result<HandModel> pwl = MakePiecewiseModel(circuit, settings);
  if (!pwl) return pwl.errors();
  return std::vector<HandModel>{MakeIdealModel(circuit),
                                MakeConstantDropModel(circuit, settings.drop),
                                std::move(pwl).value()};
}

std::vector<DiodeState> ExactStates(const Circuit& circuit, const Solution& exact) {
  std::vector<DiodeState> states(circuit.elements.size(), DiodeState::kOff);
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    if (circuit.elements[e].kind != ElementKind::kDiode) continue;
    states[e] = ExactState(circuit, static_cast<int>(e), exact.junction_voltage[e]);
  }
  return states;
}

}  // namespace knee
