// The settings of a fit from `knee fit`'s options, and the part line printed after it.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "knee/diagnostics.h"
#include "knee/fit_data.h"
#include "numbers.h"
#include "part_keys.h"

namespace knee {
namespace {

Diagnostic OptionError(const char* option, std::string message, std::string hint = "") {
  Diagnostic d;
  d.where.file = option;
  d.message = std::move(message);
  d.hint = std::move(hint);
  return d;
}

std::string_view Trim(std::string_view s) {
  while (!s.empty() && s.front() == ' ') s.remove_prefix(1);
  while (!s.empty() && s.back() == ' ') s.remove_suffix(1);
  return s;
}

}  // namespace

Result<FitOptions> MakeFitOptions(const std::string& fit_keys,
                                  const std::vector<std::string>& sets) {
  FitOptions options;
  std::vector<Diagnostic> errors;
  for (const std::string& set : sets) {
    const std::size_t eq = set.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == set.size()) {
      errors.push_back(OptionError("--set", fmt::format("'{}' is not KEY=VALUE", set),
                                   "write for example --set series_res=50m"));
      continue;
    }
    const std::string key(Trim(std::string_view(set).substr(0, eq)));
    const std::string text(Trim(std::string_view(set).substr(eq + 1)));
    const PartKeyInfo* info = FindPartKey(key);
    if (info == nullptr) {
      const std::string near = SuggestName(key, PartKeyNames());
      errors.push_back(OptionError("--set", fmt::format("'{}' is not a part key", key),
                                   near.empty() ? "" : fmt::format("did you mean '{}'?", near)));
      continue;
    }
    NumberLiteral literal;
    NumberError error;
    double value = 0;
    std::string message, hint;
    if (!ParseNumber(text, &literal, &error)) {
      errors.push_back(
          OptionError("--set", fmt::format("{}={}: {}", key, text, error.message), error.hint));
      continue;
    }
    if (!ApplyPlace(literal, text, PartKeyPlace(*info), &value, &message, &hint)) {
      errors.push_back(OptionError("--set", fmt::format("{}={}: {}", key, text, message), hint));
      continue;
    }
    if (!PartKeyValueOk(*info, value)) {
      errors.push_back(OptionError(
          "--set", fmt::format("{} = {} is out of range; it must be {}", key, text, info->rule)));
      continue;
    }
    SetPartKey(&options.model, key, value);
    if (std::optional<FitKey> fk = FindFitKey(key)) options.held[static_cast<int>(*fk)] = true;
  }
  std::string_view rest = fit_keys;
  while (!fit_keys.empty()) {
    const std::size_t comma = rest.find(',');
    const std::string name(Trim(rest.substr(0, comma)));
    std::optional<FitKey> key = FindFitKey(name);
    if (!key) {
      const bool part_key = FindPartKey(name) != nullptr;
      const std::string near = SuggestName(name, FitKeyNames());
      errors.push_back(OptionError(
          "--fit",
          part_key ? fmt::format("'{}' is a part key that no fit determines", name)
                   : fmt::format("'{}' is not a part key", name),
          part_key       ? fmt::format("give it with --set {}=VALUE; the keys a fit determines are "
                                             "sat_current, ideality, series_res, breakdown_v, breakdown_i, "
                                             "breakdown_ideality, breakdown_tc, bandgap and sat_temp_exp",
                                       name)
          : near.empty() ? std::string()
                         : fmt::format("did you mean '{}'?", near)));
    } else if (options.held[static_cast<int>(*key)]) {
      errors.push_back(OptionError("--fit",
                                   fmt::format("'{}' is held by --set and cannot also be "
                                               "fitted",
                                               name),
                                   "leave it out of --fit or drop its --set"));
    } else if (std::find(options.keys.begin(), options.keys.end(), *key) != options.keys.end()) {
      errors.push_back(OptionError("--fit", fmt::format("'{}' is named twice", name)));
    } else {
      options.keys.push_back(*key);
    }
    if (comma == std::string_view::npos) break;
    rest = rest.substr(comma + 1);
  }
  if (!errors.empty()) return errors;
  return options;
}

double ReadFitLiteral(const std::string& literal) {
  NumberLiteral parsed;
  NumberError error;
  if (!ParseNumber(literal, &parsed, &error)) return std::nan("");
  return parsed.value;
}

std::string FitPartLine(const std::string& name, const FitResult& result, const FitOptions& options,
                        bool several_temperatures, const std::vector<std::string>& sets) {
  const DiodeModel& m = result.model;
  std::string line = fmt::format("part {} diode", name);
  for (const std::string& key : PartKeyNames()) {
    const std::optional<FitKey> fk = FindFitKey(key);
    if (!fk) {
      // Keys no fit touches (ratings, ref_temp, any later key) as the user wrote them.
      std::string written;
      for (const std::string& set : sets) {
        const std::size_t eq = set.find('=');
        if (eq != std::string::npos && Trim(std::string_view(set).substr(0, eq)) == key) {
          written = std::string(Trim(std::string_view(set).substr(eq + 1)));
        }
      }
      if (!written.empty()) line += fmt::format(" {}={}", key, written);
      continue;
    }
    bool fitted = false;
    for (const FittedKey& k : result.keys) fitted |= k.key == *fk;
    const bool held = options.held[static_cast<int>(*fk)];
    const double value = GetFitKey(m, *fk);
    const bool breakdown_key = *fk == FitKey::kBreakdownV || *fk == FitKey::kBreakdownI ||
                               *fk == FitKey::kBreakdownIdeality;
    bool show = fitted || held;
    show |= *fk == FitKey::kSatCurrent || *fk == FitKey::kIdeality;
    show |= *fk == FitKey::kSeriesRes && m.series_res != 0;
    show |= breakdown_key && m.breakdown_v.has_value();
    show |= *fk == FitKey::kBreakdownTc && m.breakdown_v && (several_temperatures || value != 0);
    show |= (*fk == FitKey::kBandgap || *fk == FitKey::kSatTempExp) && several_temperatures;
    if (!show) continue;
    // Fitted keys at kFitDigits significant digits (fit= reads the same text); every other
    // key exactly as held (shortest text that reads back to the same number).
    const std::string text = fitted ? FitValueLiteral(*fk, value) : fmt::format("{}", value);
    line += fmt::format(" {}={}", key, text);
  }
  return line;
}

}  // namespace knee
