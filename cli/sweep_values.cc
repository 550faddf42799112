#include "sweep_values.h"

#include <fmt/format.h>

#include <cmath>
#include <optional>

#include "knee/diode_law.h"

namespace knee::cli {
namespace {

struct KeyInfo {
  const char* key;
  const char* unit;
  bool positive;  // must be > 0
};

constexpr KeyInfo kKeys[] = {
    {"sat_current", "A", true},     {"ideality", "", true},     {"series_res", "Ohm", false},
    {"breakdown_v", "V", true},     {"breakdown_i", "A", true}, {"breakdown_ideality", "", true},
    {"breakdown_tc", "1/K", false}, {"bandgap", "eV", true},    {"sat_temp_exp", "", false},
    {"ref_temp", "C", false},       {"max_current", "A", true}, {"max_reverse_v", "V", true},
    {"max_power", "W", true},
};

double* Field(DiodeModel* m, std::string_view key, std::optional<double>** optional_field) {
  *optional_field = nullptr;
  if (key == "sat_current") return &m->sat_current;
  if (key == "ideality") return &m->ideality;
  if (key == "series_res") return &m->series_res;
  if (key == "breakdown_i") return &m->breakdown_i;
  if (key == "breakdown_ideality") return &m->breakdown_ideality;
  if (key == "breakdown_tc") return &m->breakdown_tc;
  if (key == "bandgap") return &m->bandgap;
  if (key == "sat_temp_exp") return &m->sat_temp_exp;
  if (key == "ref_temp") return &m->ref_temp;
  if (key == "breakdown_v") *optional_field = &m->breakdown_v;
  if (key == "max_current") *optional_field = &m->max_current;
  if (key == "max_reverse_v") *optional_field = &m->max_reverse_v;
  if (key == "max_power") *optional_field = &m->max_power;
  return nullptr;
}

}  // namespace

std::string PartKeyUnit(std::string_view key) {
  for (const KeyInfo& k : kKeys) {
    if (key == k.key) return k.unit;
  }
  return "";
}

std::string ApplySweepValue(const SweepTarget& target, double value, Circuit* circuit) {
  if (!std::isfinite(value)) return fmt::format("{} = {} is not a finite number", target.name, value);
  switch (target.kind) {
    case SweepTarget::Kind::kParam:
      return "";
    case SweepTarget::Kind::kTemp:
      if (value <= -kZeroCelsius) {
        return fmt::format("temp = {} C is at or below absolute zero", value);
      }
      circuit->temp = value;
      return "";
    case SweepTarget::Kind::kElement: {
      Element& e = circuit->elements[target.index];
      if (e.kind == ElementKind::kResistor && value <= 0) {
        return fmt::format("{} = {} Ohm: a resistance must be > 0", target.name, value);
      }
      e.value = value;
      return "";
    }
    case SweepTarget::Kind::kPartKey: {
      DiodeModel& model = circuit->parts[target.index].model;
      std::optional<double>* optional_field = nullptr;
      double* field = Field(&model, target.key, &optional_field);
      for (const KeyInfo& k : kKeys) {
        if (target.key == k.key && k.positive && value <= 0) {
          return fmt::format("{} = {}: must be > 0", target.name, value);
        }
      }
      if (target.key == "series_res" && value < 0) {
        return fmt::format("{} = {}: must be >= 0", target.name, value);
      }
      if (field) *field = value;
      if (optional_field) *optional_field = value;
      return "";
    }
  }
  return "";
}

}  // namespace knee::cli
