#include "eng_format.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>

namespace knee::cli {
namespace {

struct Prefix {
  int exponent;
  const char* symbol;
};
constexpr std::array<Prefix, 15> kPrefixes{{{-24, "y"},
                                            {-21, "z"},
                                            {-18, "a"},
                                            {-15, "f"},
                                            {-12, "p"},
                                            {-9, "n"},
                                            {-6, "µ"},
                                            {-3, "m"},
                                            {0, ""},
                                            {3, "k"},
                                            {6, "M"},
                                            {9, "G"},
                                            {12, "T"},
                                            {15, "P"},
                                            {18, "E"}}};
constexpr int kSmallestGroup = -24;
constexpr int kLargestGroup = 18;

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

// `value` rounded to `significant` digits without a prefix, in the shortest of fixed and
// exponent form, the exponent without leading zeros ("0.5", "1250", "1.5e-7").
std::string PlainNumber(double value, int significant) {
  std::string text = fmt::format("{:.{}g}", value, significant);
  const size_t e = text.find('e');
  if (e == std::string::npos) return text;
  std::string mantissa = text.substr(0, e);
  std::string exponent = text.substr(e + 1);
  const bool negative = exponent[0] == '-';
  exponent = exponent.substr(exponent.find_first_not_of("+-0") == std::string::npos
                                 ? exponent.size() - 1
                                 : exponent.find_first_not_of("+-0"));
  return mantissa + "e" + (negative ? "-" : "") + exponent;
}

// A coefficient per kelvin (or per any unit, "1/X"): in ppm/X when small, %/X otherwise,
// never an SI prefix in front of "1/" ("350 µ1/K" reads as nothing).
std::string PerUnit(double value, std::string_view unit, int significant) {
  const std::string_view per = unit.substr(2);
  if (value == 0.0) return fmt::format("0 /{}", per);
  if (std::fabs(value) >= 1e-2) {
    return fmt::format("{} %/{}", PlainNumber(value * 100, significant), per);
  }
  return fmt::format("{} ppm/{}", PlainNumber(value * 1e6, significant), per);
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
  if (unit.starts_with("1/")) return PerUnit(value, unit, significant);
  // A plain number takes no SI prefix: "500 m" of nothing reads as metres.
  if (unit.empty()) return PlainNumber(value, significant);
  // Nor a temperature: "-386.3 m°C" is no way to write -0.3863 °C.
  if (unit == "C") return WithUnit(PlainNumber(value, significant), "", unit);
  if (value == 0.0) return WithUnit("0", "", unit);
  const double magnitude = std::fabs(value);
  if (magnitude < 1e-24 || magnitude >= 1e21) {
    return WithUnit(PlainNumber(value, significant), "", unit);
  }
  // Round first, then pick the prefix, so that 999.96 mV becomes 1 V, not 1000 mV.
  int exponent = static_cast<int>(std::floor(std::log10(magnitude)));
  const double scale = std::pow(10.0, significant - 1 - exponent);
  double rounded = std::round(value * scale) / scale;
  exponent = static_cast<int>(std::floor(std::log10(std::fabs(rounded))));
  int group = exponent >= 0 ? exponent / 3 * 3 : -((-exponent + 2) / 3 * 3);
  group = std::clamp(group, kSmallestGroup, kLargestGroup);
  const double mantissa = rounded / std::pow(10.0, group);
  const int int_digits = exponent - group + 1;
  const int decimals = std::max(0, significant - int_digits);
  std::string number = TrimZeros(fmt::format("{:.{}f}", mantissa, decimals));
  const Prefix* prefix = &kPrefixes[8];
  for (const Prefix& p : kPrefixes) {
    if (p.exponent == group) prefix = &p;
  }
  return WithUnit(number, prefix->symbol, unit);
}

std::string FormatRoundTrip(double value) {
  char text[kRoundTripChars];
  return std::string(text, WriteRoundTrip(value, text));
}

// The shortest digits come from {fmt}'s Dragonbox (fmt::detail::dragonbox::to_decimal,
// the routine behind its "{}"), which is several times cheaper here than std::to_chars
// of libstdc++ 12 plus the reading back of its exponent; the layout is written here.
// tests/cli/eng_format_test.cc holds every layout against fmt::format("{}").
namespace {

// "00" "01" ... "99": two decimal digits per lookup.
constexpr std::array<char, 200> kDigitPairs = [] {
  std::array<char, 200> pairs{};
  for (int i = 0; i < 100; ++i) {
    pairs[static_cast<size_t>(2 * i)] = static_cast<char>('0' + i / 10);
    pairs[static_cast<size_t>(2 * i + 1)] = static_cast<char>('0' + i % 10);
  }
  return pairs;
}();

// The count of decimal digits of v > 0: floor(log10(2) * bits) is the count or one less
// (1233/4096 = 0.30103 < log10 2; common practice, no source).
int DecimalLength(std::uint64_t v) {
  static constexpr std::uint64_t kPowers[] = {1ULL,
                                              10ULL,
                                              100ULL,
                                              1000ULL,
                                              10000ULL,
                                              100000ULL,
                                              1000000ULL,
                                              10000000ULL,
                                              100000000ULL,
                                              1000000000ULL,
                                              10000000000ULL,
                                              100000000000ULL,
                                              1000000000000ULL,
                                              10000000000000ULL,
                                              100000000000000ULL,
                                              1000000000000000ULL,
                                              10000000000000000ULL,
                                              100000000000000000ULL,
                                              1000000000000000000ULL,
                                              10000000000000000000ULL};
  const int bits = 64 - __builtin_clzll(v | 1);
  const int n = (bits * 1233) >> 12;
  return n + (v >= kPowers[n] ? 1 : 0);
}

// The `length` decimal digits of v, most significant first, at out: two per division by
// 100, the divisions of the low eight digits in 32 bits. v < 10^17 (a double's shortest
// significand), so the digits above those eight fit 32 bits too.
void WriteDigits(std::uint64_t v, int length, char* out) {
  char* at = out + length;
  const auto pair = [&at](std::uint32_t two) {
    at -= 2;
    std::memcpy(at, kDigitPairs.data() + 2 * two, 2);
  };
  if (length > 8) {
    auto low = static_cast<std::uint32_t>(v % 100000000);
    v /= 100000000;
    for (int k = 0; k < 4; ++k) {
      pair(low % 100);
      low /= 100;
    }
  }
  auto high = static_cast<std::uint32_t>(v);
  while (high >= 100) {
    pair(high % 100);
    high /= 100;
  }
  if (high >= 10) {
    pair(high);
  } else {
    *--at = static_cast<char>('0' + high);
  }
}

}  // namespace

char* WriteRoundTrip(double value, char* out) {
  if (std::isnan(value)) return std::copy_n("nan", 3, out);
  if (std::signbit(value)) {
    *out++ = '-';
    value = -value;
  }
  if (std::isinf(value)) return std::copy_n("inf", 3, out);
  if (value == 0.0) {
    *out++ = '0';
    return out;
  }
  const auto decimal = fmt::detail::dragonbox::to_decimal(value);
  // Runs of digits are moved kDigitRun bytes at a time (a fixed-size copy, no call), the
  // bytes past a run's end overwritten by what follows or left beyond the returned end:
  // `digits` and the caller's kRoundTripChars of room allow for that.
  char digits[2 * kDigitRun] = {};
  const int length = DecimalLength(decimal.significand);
  WriteDigits(decimal.significand, length, digits);
  const auto n = static_cast<size_t>(length);
  const auto run = [](char* to, const char* from) { std::memcpy(to, from, kDigitRun); };
  // Decimal exponent of the first digit: value = d.ddd * 10^exponent.
  const int exponent = decimal.exponent + static_cast<int>(n) - 1;
  if (exponent < -4 || exponent >= 16) {
    *out++ = digits[0];
    if (n > 1) {
      *out++ = '.';
      run(out, digits + 1);
      out += n - 1;
    }
    *out++ = 'e';
    *out++ = exponent < 0 ? '-' : '+';
    const int magnitude = std::abs(exponent);
    if (magnitude < 10) *out++ = '0';  // at least two exponent digits
    return std::to_chars(out, out + 3, magnitude).ptr;
  }
  if (exponent < 0) {
    std::memcpy(out, "0.0000", 6);  // "0." and up to four zeros, as many as kept below
    out += 2 + (-exponent - 1);
    run(out, digits);
    return out + n;
  }
  const auto whole = static_cast<size_t>(exponent) + 1;  // digits before the point
  if (n <= whole) {
    run(out, digits);
    out += n;
    std::memset(out, '0', kDigitRun);
    return out + (whole - n);
  }
  run(out, digits);
  out += whole;
  *out++ = '.';
  run(out, digits + whole);
  return out + (n - whole);
}

}  // namespace knee::cli
