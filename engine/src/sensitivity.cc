// The targets of a sensitivity and the gradient's bookkeeping (knee/sensitivity.h).
#include "knee/sensitivity.h"

#include "check.h"

namespace knee {
namespace {

bool IsBreakdownKey(ModelKey key) {
  return key == ModelKey::kBreakdownV || key == ModelKey::kBreakdownI ||
         key == ModelKey::kBreakdownIdeality || key == ModelKey::kBreakdownTc;
}

}  // namespace

const char* ModelKeyName(ModelKey key) {
  switch (key) {
    case ModelKey::kSatCurrent:
      return "sat_current";
    case ModelKey::kIdeality:
      return "ideality";
    case ModelKey::kSeriesRes:
      return "series_res";
    case ModelKey::kBreakdownV:
      return "breakdown_v";
    case ModelKey::kBreakdownI:
      return "breakdown_i";
    case ModelKey::kBreakdownIdeality:
      return "breakdown_ideality";
    case ModelKey::kBreakdownTc:
      return "breakdown_tc";
    case ModelKey::kBandgap:
      return "bandgap";
    case ModelKey::kSatTempExp:
      return "sat_temp_exp";
    case ModelKey::kRefTemp:
      return "ref_temp";
  }
  return "";
}

const char* ModelKeyUnit(ModelKey key) {
  switch (key) {
    case ModelKey::kSatCurrent:
    case ModelKey::kBreakdownI:
      return "A";
    case ModelKey::kSeriesRes:
      return "Ohm";
    case ModelKey::kBreakdownV:
      return "V";
    case ModelKey::kBreakdownTc:
      return "1/K";
    case ModelKey::kBandgap:
      return "eV";
    case ModelKey::kRefTemp:
      return "C";
    case ModelKey::kIdeality:
    case ModelKey::kBreakdownIdeality:
    case ModelKey::kSatTempExp:
      return "";
  }
  return "";
}

double ModelKeyValue(const DiodeModel& m, ModelKey key) {
  switch (key) {
    case ModelKey::kSatCurrent:
      return m.sat_current;
    case ModelKey::kIdeality:
      return m.ideality;
    case ModelKey::kSeriesRes:
      return m.series_res;
    case ModelKey::kBreakdownV:
      return m.breakdown_v ? *m.breakdown_v : 0.0;
    case ModelKey::kBreakdownI:
      return m.breakdown_i;
    case ModelKey::kBreakdownIdeality:
      return m.breakdown_ideality;
    case ModelKey::kBreakdownTc:
      return m.breakdown_tc;
    case ModelKey::kBandgap:
      return m.bandgap;
    case ModelKey::kSatTempExp:
      return m.sat_temp_exp;
    case ModelKey::kRefTemp:
      return m.ref_temp;
  }
  return 0.0;
}

std::vector<SensitivityTarget> SensitivityTargets(const Circuit& circuit) {
  using Kind = SensitivityTarget::Kind;
  std::vector<SensitivityTarget> targets;
  std::vector<char> part_used(circuit.parts.size(), 0);
  bool takes_circuit_temp = false;
  for (size_t i = 0; i < circuit.elements.size(); ++i) {
    const Element& e = circuit.elements[i];
    const int index = static_cast<int>(i);
    if (e.kind != ElementKind::kDiode) {
      targets.push_back({Kind::kElementValue, index});
      continue;
    }
    targets.push_back({Kind::kArea, index});
    if (e.temp) {
      targets.push_back({Kind::kElementTemp, index});
    } else {
      takes_circuit_temp = true;
    }
    if (e.part >= 0) part_used[static_cast<size_t>(e.part)] = 1;
  }
  for (size_t p = 0; p < circuit.parts.size(); ++p) {
    if (part_used[p] == 0) continue;
    const bool breakdown = circuit.parts[p].model.breakdown_v.has_value();
    for (int k = 0; k < kModelKeyCount; ++k) {
      const auto key = static_cast<ModelKey>(k);
      if (IsBreakdownKey(key) && !breakdown) continue;
      targets.push_back({Kind::kPartKey, static_cast<int>(p), key});
    }
  }
  if (takes_circuit_temp) targets.push_back({Kind::kCircuitTemp, -1});
  return targets;
}

std::string TargetName(const Circuit& circuit, const SensitivityTarget& t) {
  using Kind = SensitivityTarget::Kind;
  switch (t.kind) {
    case Kind::kElementValue:
      return circuit.elements.at(static_cast<size_t>(t.index)).name;
    case Kind::kArea:
      return circuit.elements.at(static_cast<size_t>(t.index)).name + ".area";
    case Kind::kElementTemp:
      return circuit.elements.at(static_cast<size_t>(t.index)).name + ".temp";
    case Kind::kPartKey:
      return circuit.parts.at(static_cast<size_t>(t.index)).name + "." + ModelKeyName(t.key);
    case Kind::kCircuitTemp:
      return "temp";
  }
  return "";
}

double TargetValue(const Circuit& circuit, const SensitivityTarget& t) {
  using Kind = SensitivityTarget::Kind;
  switch (t.kind) {
    case Kind::kElementValue:
      return circuit.elements.at(static_cast<size_t>(t.index)).value;
    case Kind::kArea:
      return circuit.elements.at(static_cast<size_t>(t.index)).area;
    case Kind::kElementTemp:
      return circuit.DeviceTemp(circuit.elements.at(static_cast<size_t>(t.index)));
    case Kind::kPartKey:
      return ModelKeyValue(circuit.parts.at(static_cast<size_t>(t.index)).model, t.key);
    case Kind::kCircuitTemp:
      return circuit.temp;
  }
  return 0.0;
}

std::string TargetUnit(const Circuit& circuit, const SensitivityTarget& t) {
  using Kind = SensitivityTarget::Kind;
  switch (t.kind) {
    case Kind::kElementValue:
      return ElementValueUnit(circuit.elements.at(static_cast<size_t>(t.index)).kind);
    case Kind::kArea:
      return "";
    case Kind::kElementTemp:
    case Kind::kCircuitTemp:
      return "C";
    case Kind::kPartKey:
      return ModelKeyUnit(t.key);
  }
  return "";
}

void SetTargetValue(Circuit* circuit, const SensitivityTarget& t, double v) {
  using Kind = SensitivityTarget::Kind;
  const auto i = static_cast<size_t>(t.index);
  switch (t.kind) {
    case Kind::kElementValue:
      circuit->elements.at(i).value = v;
      return;
    case Kind::kArea:
      circuit->elements.at(i).area = v;
      return;
    case Kind::kElementTemp:
      circuit->elements.at(i).temp = v;
      return;
    case Kind::kCircuitTemp:
      circuit->temp = v;
      return;
    case Kind::kPartKey:
      break;
  }
  DiodeModel& m = circuit->parts.at(i).model;
  switch (t.key) {
    case ModelKey::kSatCurrent:
      m.sat_current = v;
      return;
    case ModelKey::kIdeality:
      m.ideality = v;
      return;
    case ModelKey::kSeriesRes:
      m.series_res = v;
      return;
    case ModelKey::kBreakdownV:
      m.breakdown_v = v;
      return;
    case ModelKey::kBreakdownI:
      m.breakdown_i = v;
      return;
    case ModelKey::kBreakdownIdeality:
      m.breakdown_ideality = v;
      return;
    case ModelKey::kBreakdownTc:
      m.breakdown_tc = v;
      return;
    case ModelKey::kBandgap:
      m.bandgap = v;
      return;
    case ModelKey::kSatTempExp:
      m.sat_temp_exp = v;
      return;
    case ModelKey::kRefTemp:
      m.ref_temp = v;
      return;
  }
}

void CircuitGradient::Reset(const Circuit& circuit) {
  value.assign(circuit.elements.size(), 0.0);
  area.assign(circuit.elements.size(), 0.0);
  temp.assign(circuit.elements.size(), 0.0);
  part.assign(circuit.parts.size(), std::array<double, kModelKeyCount>{});
  circuit_temp = 0.0;
}

double CircuitGradient::At(const SensitivityTarget& t) const {
  using Kind = SensitivityTarget::Kind;
  const auto i = static_cast<size_t>(t.index);
  switch (t.kind) {
    case Kind::kElementValue:
      return value.at(i);
    case Kind::kArea:
      return area.at(i);
    case Kind::kElementTemp:
      return temp.at(i);
    case Kind::kPartKey:
      return part.at(i)[static_cast<size_t>(t.key)];
    case Kind::kCircuitTemp:
      return circuit_temp;
  }
  return 0.0;
}

}  // namespace knee
