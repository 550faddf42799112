#include <fmt/format.h>

#include <cmath>
#include <cstdlib>

#include "knee/fit.h"

namespace knee {
namespace {

struct KeyInfo {
  const char* name;
  const char* unit;
};
constexpr KeyInfo kKeys[kFitKeyCount] = {
    {"sat_current", "A"},    {"ideality", ""},     {"series_res", "Ohm"},
    {"breakdown_v", "V"},    {"breakdown_i", "A"}, {"breakdown_ideality", ""},
    {"breakdown_tc", "1/K"}, {"bandgap", "eV"},    {"sat_temp_exp", ""},
};

const KeyInfo& Info(FitKey key) { return kKeys[static_cast<int>(key)]; }

}  // namespace

const char* FitKeyName(FitKey key) { return Info(key).name; }
const char* FitKeyUnit(FitKey key) { return Info(key).unit; }

std::optional<FitKey> FindFitKey(std::string_view name) {
  for (int k = 0; k < kFitKeyCount; ++k) {
    if (name == kKeys[k].name) return static_cast<FitKey>(k);
  }
  return std::nullopt;
}

std::vector<std::string> FitKeyNames() {
  std::vector<std::string> names;
  for (const KeyInfo& info : kKeys) names.emplace_back(info.name);
  return names;
}

double GetFitKey(const DiodeModel& m, FitKey key) {
  switch (key) {
    case FitKey::kSatCurrent:
      return m.sat_current;
    case FitKey::kIdeality:
      return m.ideality;
    case FitKey::kSeriesRes:
      return m.series_res;
    case FitKey::kBreakdownV:
      return m.breakdown_v.value_or(0.0);
    case FitKey::kBreakdownI:
      return m.breakdown_i;
    case FitKey::kBreakdownIdeality:
      return m.breakdown_ideality;
    case FitKey::kBreakdownTc:
      return m.breakdown_tc;
    case FitKey::kBandgap:
      return m.bandgap;
    case FitKey::kSatTempExp:
      return m.sat_temp_exp;
  }
  return 0;
}

void SetFitKey(DiodeModel* m, FitKey key, double v) {
  switch (key) {
    case FitKey::kSatCurrent:
      m->sat_current = v;
      return;
    case FitKey::kIdeality:
      m->ideality = v;
      return;
    case FitKey::kSeriesRes:
      m->series_res = v;
      return;
    case FitKey::kBreakdownV:
      m->breakdown_v = v;
      return;
    case FitKey::kBreakdownI:
      m->breakdown_i = v;
      return;
    case FitKey::kBreakdownIdeality:
      m->breakdown_ideality = v;
      return;
    case FitKey::kBreakdownTc:
      m->breakdown_tc = v;
      return;
    case FitKey::kBandgap:
      m->bandgap = v;
      return;
    case FitKey::kSatTempExp:
      m->sat_temp_exp = v;
      return;
  }
}

std::string PartKeyLiteral(double value, std::string_view unit) {
  if (value == 0 || !std::isfinite(value)) return fmt::format("{}", value);
  const bool prefixed = unit == "A" || unit == "V" || unit == "Ohm" || unit == "W";
  if (!prefixed) return fmt::format("{:.{}g}", value, kFitDigits);
  // Round first, so that the prefix is chosen for the rounded mantissa (999.99999995 -> 1k).
  const double rounded =
      std::strtod(fmt::format("{:.{}e}", value, kFitDigits - 1).c_str(), nullptr);
  static constexpr struct {
    double factor;
    const char* prefix;
  } kPrefixes[] = {{1e12, "T"}, {1e9, "G"},  {1e6, "M"},  {1e3, "k"},   {1, ""},
                   {1e-3, "m"}, {1e-6, "u"}, {1e-9, "n"}, {1e-12, "p"}, {1e-15, "f"}};
  const double magnitude = std::fabs(rounded);
  for (const auto& p : kPrefixes) {
    if (magnitude >= p.factor * (1 - 1e-15)) {
      return fmt::format("{:.{}g}{}", rounded / p.factor, kFitDigits, p.prefix);
    }
  }
  return fmt::format("{:.{}e}", rounded, kFitDigits - 1);
}

std::string FitValueLiteral(FitKey key, double value) {
  return PartKeyLiteral(value, FitKeyUnit(key));
}

}  // namespace knee
