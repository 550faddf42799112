#include "part_keys.h"

#include <fmt/format.h>

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
  // A subnormal series resistance has no finite conductance (see UsableResistance).
  if (info.unit == std::string_view("Ohm")) return value == 0 || UsableResistance(value);
  if (rule == ">= 0") return value >= 0;
  if (rule == "finite") return true;
  return value > -kZeroCelsius;
}

std::string PartKeyRule(const PartKeyInfo& info, double value) {
  if (info.unit == std::string_view("Ohm") && value > 0) {
    return fmt::format("0 or {}", kResistanceRule);
  }
  return info.rule;
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
