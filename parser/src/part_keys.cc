#include "part_keys.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cmath>

#include "knee/diagnostics.h"
#include "knee/diode_law.h"

namespace knee {
namespace {

constexpr PartKeyInfo kKeys[] = {
    {"sat_current", "A", "> 0"},
    {"ideality", "", "> 0"},
    {"series_res", "Ohm", ">= 0"},
    {"breakdown_v", "V", "> 0"},
    {"breakdown_i", "A", "> 0"},
    {"breakdown_ideality", "", "> 0"},
    {"breakdown_tc", "1/K", "finite"},
    {"bandgap", "eV", "> 0"},
    {"sat_temp_exp", "", "finite"},
    {"ref_temp", "C", "above absolute zero (-273.15 C)"},
    {"max_current", "A", "> 0"},
    {"max_reverse_v", "V", "> 0"},
    {"max_power", "W", "> 0"},
    {"thermal_res", "K/W", ">= 0"},
    {"max_junction_temp", "C", "above absolute zero (-273.15 C)"},
};

// Common abbreviations and spelled-out variants of the keys (lower case), mapped to the key
// they most likely mean. Our own table: short forms engineers write in notes and data
// sheets, not the names of any program.
struct Alias {
  const char* written;
  const char* key;
};
constexpr Alias kAliases[] = {
    {"is", "sat_current"},
    {"isat", "sat_current"},
    {"i_s", "sat_current"},
    {"i0", "sat_current"},
    {"saturation_current", "sat_current"},
    {"n", "ideality"},
    {"eta", "ideality"},
    {"ideality_factor", "ideality"},
    {"emission_coefficient", "ideality"},
    {"rs", "series_res"},
    {"r_s", "series_res"},
    {"rser", "series_res"},
    {"series_resistance", "series_res"},
    {"bv", "breakdown_v"},
    {"vbr", "breakdown_v"},
    {"vz", "breakdown_v"},
    {"breakdown_voltage", "breakdown_v"},
    {"zener_voltage", "breakdown_v"},
    {"ibr", "breakdown_i"},
    {"iz", "breakdown_i"},
    {"izt", "breakdown_i"},
    {"breakdown_current", "breakdown_i"},
    {"nbr", "breakdown_ideality"},
    {"tc", "breakdown_tc"},
    {"tcv", "breakdown_tc"},
    {"eg", "bandgap"},
    {"band_gap", "bandgap"},
    {"energy_gap", "bandgap"},
    {"tref", "ref_temp"},
    {"t0", "ref_temp"},
    {"reference_temp", "ref_temp"},
    {"imax", "max_current"},
    {"i_max", "max_current"},
    {"if_max", "max_current"},
    {"vrmax", "max_reverse_v"},
    {"vr_max", "max_reverse_v"},
    {"vrrm", "max_reverse_v"},
    {"max_reverse_voltage", "max_reverse_v"},
    {"pmax", "max_power"},
    {"p_max", "max_power"},
    {"pd", "max_power"},
    {"rth", "thermal_res"},
    {"rthja", "thermal_res"},
    {"tjmax", "max_junction_temp"},
};

std::string Lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

// The key `wrong` most likely means by the alias table or by case alone; "" if none.
std::string LikelyKey(std::string_view wrong) {
  const std::string lower = Lower(wrong);
  if (FindPartKey(lower)) return lower;
  for (const Alias& a : kAliases) {
    if (lower == a.written) return a.key;
  }
  return "";
}

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
  if (key == "thermal_res") m->thermal_res = v;
  if (key == "max_junction_temp") m->max_junction_temp = v;
}

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
  if (key == "thermal_res") return m.thermal_res;
  if (key == "max_junction_temp") return m.max_junction_temp;
  return std::nullopt;
}

std::string PartKeyHint(std::string_view wrong, std::string_view prefix) {
  const std::string likely = LikelyKey(wrong);
  if (!likely.empty()) {
    const bool by_case = Lower(wrong) == likely;
    return fmt::format("did you mean '{}{}'? ('{}' reads as {})", prefix, likely, wrong,
                       by_case ? "that key in other capitals" : "a common abbreviation of it");
  }
  const std::string near = SuggestName(wrong, PartKeyNames());
  if (!near.empty()) return fmt::format("did you mean '{}{}'?", prefix, near);
  return fmt::format("the part keys are {}", fmt::join(PartKeyNames(), ", "));
}

}  // namespace knee

namespace knee {}  // namespace knee
