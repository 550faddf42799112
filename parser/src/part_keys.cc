#include "part_keys.h"

#include <cmath>

#include "knee/diode_law.h"

namespace knee {
namespace {

constexpr PartKeyInfo kKeys[] = {
    {"sat_current", "A", "> 0"},       {"ideality", "", "> 0"},
    {"series_res", "Ohm", ">= 0"},     {"breakdown_v", "V", "> 0"},
    {"breakdown_i", "A", "> 0"},       {"breakdown_ideality", "", "> 0"},
    {"breakdown_tc", "1/K", "finite"}, {"bandgap", "eV", "> 0"},
    {"sat_temp_exp", "", "finite"},    {"ref_temp", "C", "above absolute zero (-273.15 C)"},
    {"max_current", "A", "> 0"},       {"max_reverse_v", "V", "> 0"},
    {"max_power", "W", "> 0"},
};

}  // namespace

const PartKeyInfo* FindPartKey(std::string_view key) {
  for (const PartKeyInfo& info : kKeys) {
    if (key == info.key) return &info;
  }
  return nullptr;
}

std::vector<std::string> PartKeyNames() {
  std::vector<std::string> names;
  for (const PartKeyInfo& info : kKeys) names.emplace_back(info.key);
  return names;
}

ValuePlace PartKeyPlace(const PartKeyInfo& info) { return ValuePlace{info.key, info.unit}; }

bool PartKeyValueOk(const PartKeyInfo& info, double value) {
  const std::string_view rule = info.rule;
  if (!std::isfinite(value)) return false;
  if (rule == "> 0") return value > 0;
  if (rule == ">= 0") return value >= 0;
  if (rule == "finite") return true;
  return value > -kZeroCelsius;
}

void SetPartKey(DiodeModel* m, std::string_view key, double v) {
  if (key == "sat_current") m->sat_current = v;
  if (key == "ideality") m->ideality = v;
  if (key == "series_res") m->series_res = v;
  if (key == "breakdown_v") m->breakdown_v = v;
  if (key == "breakdown_i") m->breakdown_i = v;
  if (key == "breakdown_ideality") m->breakdown_ideality = v;
  if (key == "breakdown_tc") m->breakdown_tc = v;
  if (key == "bandgap") m->bandgap = v;
  if (key == "sat_temp_exp") m->sat_temp_exp = v;
  if (key == "ref_temp") m->ref_temp = v;
  if (key == "max_current") m->max_current = v;
  if (key == "max_reverse_v") m->max_reverse_v = v;
  if (key == "max_power") m->max_power = v;
}

}  // namespace knee

namespace knee {

std::optional<double> GetPartKey(const DiodeModel& m, std::string_view key) {
  if (key == "sat_current") return m.sat_current;
  if (key == "ideality") return m.ideality;
  if (key == "series_res") return m.series_res;
  if (key == "breakdown_v") return m.breakdown_v;
  if (key == "breakdown_i") return m.breakdown_i;
  if (key == "breakdown_ideality") return m.breakdown_ideality;
  if (key == "breakdown_tc") return m.breakdown_tc;
  if (key == "bandgap") return m.bandgap;
  if (key == "sat_temp_exp") return m.sat_temp_exp;
  if (key == "ref_temp") return m.ref_temp;
  if (key == "max_current") return m.max_current;
  if (key == "max_reverse_v") return m.max_reverse_v;
  if (key == "max_power") return m.max_power;
  return std::nullopt;
}

}  // namespace knee
