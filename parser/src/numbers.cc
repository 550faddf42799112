#include "numbers.h"

#include <fmt/format.h>

#include <charconv>
#include <cmath>
#include <string>

#include "knee/diode_law.h"

namespace knee {
namespace {

bool IsDigit(char c) { return c >= '0' && c <= '9'; }

// SI prefixes (netlist-format.md table; SI Brochure, 9th edition, table 7). Returns the
// power of ten and the byte length of the prefix at text[0], or length 0 if none.
struct Prefix {
  int exponent = 0;
  std::size_t length = 0;
};
Prefix MatchPrefix(std::string_view text) {
  if (text.empty()) return {};
  if (text.substr(0, 2) == "\xC2\xB5" || text.substr(0, 2) == "\xCE\xBC") return {-6, 2};
  switch (text[0]) {
    case 'f':
      return {-15, 1};
    case 'p':
      return {-12, 1};
    case 'n':
      return {-9, 1};
    case 'u':
      return {-6, 1};
    case 'm':
      return {-3, 1};
    case 'k':
      return {3, 1};
    case 'M':
      return {6, 1};
    case 'G':
      return {9, 1};
    case 'T':
      return {12, 1};
    default:
      return {};
  }
}

// The accepted units, as written, to their canonical name; "" if not a unit.
// Returns a view of a string literal, so that a parsed literal keeps no unit string of
// its own (a netlist of a million values would hold a million of them).
std::string_view CanonicalUnit(std::string_view u) {
  static constexpr std::string_view kUnits[] = {"V", "A",  "W", "S", "F", "H",
                                                "s", "Hz", "K", "C", "%", "Ohm"};
  for (std::string_view unit : kUnits) {
    if (u == unit) return unit;
  }
  // ohm, Ω (U+03A9 GREEK CAPITAL LETTER OMEGA) and Ω (U+2126 OHM SIGN).
  if (u == "ohm" || u == "\xCE\xA9" || u == "\xE2\x84\xA6") return "Ohm";
  return "";
}

// Byte length of the UTF-8 character at text[0].
std::size_t CharLength(std::string_view text) {
  std::size_t n = 1;
  while (n < text.size() && (static_cast<unsigned char>(text[n]) & 0xC0) == 0x80) ++n;
  return n;
}

NumberError Fail(std::string_view text, std::size_t offset, std::size_t length, std::string what,
                 std::string hint = "") {
  return NumberError{offset, length, fmt::format("malformed number '{}': {}", text, what),
                     std::move(hint)};
}

}  // namespace

bool ParseNumber(std::string_view text, NumberLiteral* out, NumberError* error) {
  const std::size_t n = text.size();
  std::size_t i = 0;
  bool negative = false;
  if (i < n && (text[i] == '+' || text[i] == '-')) {
    negative = text[i] == '-';
    ++i;
  }
  const std::size_t mantissa_begin = i;
  while (i < n && IsDigit(text[i])) ++i;
  const std::size_t int_digits = i - mantissa_begin;
  bool has_dot = false;
  std::size_t frac_digits = 0;
  if (i < n && text[i] == '.') {
    has_dot = true;
    ++i;
    while (i < n && IsDigit(text[i])) {
      ++i;
      ++frac_digits;
    }
  }
  if (int_digits + frac_digits == 0) {
    const std::size_t at = i < n ? i : (n > 0 ? n - 1 : 0);
    if (mantissa_begin > 0) {
      *error = Fail(text, at, i < n ? CharLength(text.substr(i)) : 1,
                    fmt::format("expected a digit after '{}'", text.substr(0, mantissa_begin)));
    } else {
      *error = Fail(text, at, 1, "expected a digit");
    }
    return false;
  }
  std::string mantissa(text.substr(mantissa_begin, i - mantissa_begin));
  long long exponent = 0;

  // IEC 60062 letter-as-decimal-point code (IEC 60062:2016, clause 4, letter and digit
  // code): digits, a letter that marks the decimal point and the multiplier, digits.
  // knee uses R (x1) and its own case-sensitive SI prefixes as the letters.
  bool iec = false;
  if (!has_dot && int_digits > 0 && i < n) {
    Prefix p = MatchPrefix(text.substr(i));
    if (text[i] == 'R') p = {0, 1};
    if (p.length > 0 && i + p.length < n && IsDigit(text[i + p.length])) {
      std::size_t j = i + p.length;
      const std::size_t frac_begin = j;
      while (j < n && IsDigit(text[j])) ++j;
      mantissa += ".";
      mantissa += text.substr(frac_begin, j - frac_begin);
      exponent = p.exponent;
      i = j;
      iec = true;
    }
  }
  if (!iec && i < n && (text[i] == 'e' || text[i] == 'E')) {
    std::size_t j = i + 1;
    bool exp_negative = false;
    if (j < n && (text[j] == '+' || text[j] == '-')) {
      exp_negative = text[j] == '-';
      ++j;
    }
    if (j >= n || !IsDigit(text[j])) {
      *error =
          Fail(text, i, 1, fmt::format("the exponent after '{}' needs digits, e.g. 1e-3", text[i]));
      return false;
    }
    long long e = 0;
    while (j < n && IsDigit(text[j])) {
      if (e < 100000) e = e * 10 + (text[j] - '0');
      ++j;
    }
    exponent = exp_negative ? -e : e;
    i = j;
  }
  const std::string_view head = text.substr(0, i);
  const std::string_view suffix = text.substr(i);
  std::string_view unit;
  if (!suffix.empty()) {
    if (suffix[0] == '.') {
      *error = Fail(text, i, 1, fmt::format("unexpected '.' after '{}'", head));
      return false;
    }
    unit = CanonicalUnit(suffix);
    if (unit.empty()) {
      const Prefix p = iec ? Prefix{} : MatchPrefix(suffix);
      if (p.length > 0) {
        const std::string_view rest = suffix.substr(p.length);
        unit = CanonicalUnit(rest);
        if (!rest.empty() && unit.empty()) {
          *error = Fail(
              text, i + p.length, rest.size(),
              fmt::format("'{}' after '{}' is not a unit", rest, text.substr(0, i + p.length)));
          return false;
        }
        exponent += p.exponent;
      } else if (iec) {
        std::string hint;
        if (MatchPrefix(suffix).length > 0 || suffix[0] == 'R') {
          hint = fmt::format("a letter code such as '{}' already holds the multiplier", head);
        }
        *error = Fail(text, i, suffix.size(),
                      fmt::format("'{}' after '{}' is not a unit", suffix, head), hint);
        return false;
      } else {
        const std::size_t len = CharLength(suffix);
        std::string hint;
        if (suffix[0] == 'K' && suffix.size() > 1 && IsDigit(suffix[1])) {
          hint = fmt::format("did you mean '{}k{}'? The kilo prefix is a lowercase k", head,
                             suffix.substr(1));
        }
        *error =
            Fail(text, i, len,
                 fmt::format("'{}' is not an SI prefix or a unit", suffix.substr(0, len)), hint);
        return false;
      }
    }
  }
  if (unit == "%") exponent -= 2;  // % is the factor 0.01, applied exactly in decimal
  const std::string decimal = mantissa + "e" + std::to_string(exponent);
  double value = 0;
  const auto [ptr, ec] = std::from_chars(decimal.data(), decimal.data() + decimal.size(), value);
  if (ec != std::errc() || ptr != decimal.data() + decimal.size() || !std::isfinite(value)) {
    *error = NumberError{0, text.size(),
                         fmt::format("number '{}' is out of the range of a double", text), ""};
    return false;
  }
  out->value = negative ? -value : value;
  out->unit = unit;
  out->unit_offset = i;
  return true;
}

std::string DescribeUnit(std::string_view place_unit) {
  if (place_unit == "Ohm") return "ohms (Ohm, ohm or Ω) or no unit";
  if (place_unit == "V") return "volts (V) or no unit";
  if (place_unit == "A") return "amperes (A) or no unit";
  if (place_unit == "W") return "watts (W) or no unit";
  if (place_unit == "C") return "degrees Celsius (C), kelvin (K) or no unit";
  if (place_unit == "1/K") return "a plain number (per kelvin) or %";
  if (place_unit == "eV") return "a plain number (in eV)";
  if (place_unit == "K/W") return "a plain number (in kelvin per watt)";
  return "a plain number or %";
}

bool ApplyPlace(const NumberLiteral& literal, std::string_view literal_text,
                const ValuePlace& place, double* value, std::string* message, std::string* hint) {
  *value = literal.value;
  const std::string_view u = literal.unit;
  if (u.empty() || place.unit == "*") return true;
  if (u == "%" && (place.unit.empty() || place.unit == "1/K")) return true;
  if (place.unit == "C" && u == "C") return true;
  if (place.unit == "C" && u == "K") {
    *value = literal.value - kZeroCelsius;
    return true;
  }
  if (u == place.unit) return true;
  *message = fmt::format("unit '{}' does not fit {}; expected {}", u, place.what,
                         DescribeUnit(place.unit));
  if (u == "K" && !literal_text.empty() && literal_text.back() == 'K') {
    *hint = fmt::format("did you mean {}k (kilo)? K is kelvin",
                        literal_text.substr(0, literal_text.size() - 1));
  } else {
    hint->clear();
  }
  return false;
}

bool UsableResistance(double ohms) { return ohms > 0 && std::isnormal(ohms); }

}  // namespace knee
