#include "eng_format.h"

#include <fmt/format.h>

#include <array>
#include <cmath>

namespace knee::cli {
namespace {

struct Prefix {
  int exponent;
  const char* symbol;
};
constexpr std::array<Prefix, 10> kPrefixes{{{-15, "f"},
                                            {-12, "p"},
                                            {-9, "n"},
                                            {-6, "µ"},
                                            {-3, "m"},
                                            {0, ""},
                                            {3, "k"},
                                            {6, "M"},
                                            {9, "G"},
                                            {12, "T"}}};

std::string TrimZeros(std::string digits) {
  if (digits.find('.') == std::string::npos) return digits;
  while (!digits.empty() && digits.back() == '0') digits.pop_back();
  if (!digits.empty() && digits.back() == '.') digits.pop_back();
  return digits;
}

std::string WithUnit(const std::string& number, std::string_view prefix, std::string_view unit) {
  std::string display = DisplayUnit(unit);
  if (display.empty() && prefix.empty()) return number;
  return fmt::format("{} {}{}", number, prefix, display);
}

}  // namespace

std::string DisplayUnit(std::string_view unit) {
  if (unit == "Ohm") return "Ω";
  if (unit == "C") return "°C";
  return std::string(unit);
}

std::string FormatEng(double value, std::string_view unit, int significant) {
  if (std::isnan(value)) return "—";
  if (std::isinf(value)) return WithUnit(value > 0 ? "inf" : "-inf", "", unit);
  if (value == 0.0) return WithUnit("0", "", unit);
  const double magnitude = std::fabs(value);
  if (magnitude < 1e-15 || magnitude >= 1e15) {
    return WithUnit(fmt::format("{:.{}e}", value, significant - 1), "", unit);
  }
  // Round first, then pick the prefix, so that 999.96 mV becomes 1 V, not 1000 mV.
  int exponent = static_cast<int>(std::floor(std::log10(magnitude)));
  const double scale = std::pow(10.0, significant - 1 - exponent);
  double rounded = std::round(value * scale) / scale;
  exponent = static_cast<int>(std::floor(std::log10(std::fabs(rounded))));
  int group = exponent >= 0 ? exponent / 3 * 3 : -((-exponent + 2) / 3 * 3);
  if (group < -15) group = -15;
  if (group > 12) group = 12;
  const double mantissa = rounded / std::pow(10.0, group);
  const int int_digits = exponent - group + 1;
  const int decimals = std::max(0, significant - int_digits);
  std::string number = TrimZeros(fmt::format("{:.{}f}", mantissa, decimals));
  const Prefix* prefix = &kPrefixes[5];
  for (const Prefix& p : kPrefixes) {
    if (p.exponent == group) prefix = &p;
  }
  return WithUnit(number, prefix->symbol, unit);
}

std::string FormatRoundTrip(double value) {
  if (std::isnan(value)) return "nan";
  return fmt::format("{}", value);
}

}  // namespace knee::cli
