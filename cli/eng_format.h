// Engineering notation for people ("652.3 mV", "4.31 mA") and round-trip numbers for
// scripts.
#pragma once

#include <string>
#include <string_view>

namespace knee::cli {

// `value` with an SI prefix chosen so that the mantissa lies in [1, 1000), rounded to
// `significant` digits with trailing zeros dropped, then a space and `unit`
// ("Ohm" is shown as "Ω"). The prefixes run from y (1e-24) to E (1e18); values beyond
// them (but not zero) are shown in exponent form ("3.4e-30 A"). A plain number (unit "")
// takes no prefix ("0.5", "1.5e-7"); a coefficient per unit ("1/K") is shown in ppm/K, or
// in %/K from 1e-2 up. NaN as "—", infinities as "inf".
std::string FormatEng(double value, std::string_view unit, int significant = 4);

// Shortest decimal text that reads back to exactly `value` ("nan" for NaN, "inf",
// "-inf"): the shortest digits that round-trip (Dragonbox), in fixed notation when the decimal
// exponent of the first digit is in [-4, 16) ("0.00012", "1500", "-0"), else as
// "1.5e-05" / "2e+16" (the layout of {fmt}'s "{}", which scripts have read since v1).
std::string FormatRoundTrip(double value);

// Room WriteRoundTrip needs: its text is at most "-" + 17 digits + "." + "e-308", or
// "-0." + 3 zeros + 17 digits, but it writes runs of digits kDigitRun bytes at a time
// (the sign, 16 digits, the point and a run: 42 bytes at most).
inline constexpr size_t kDigitRun = 24;
inline constexpr size_t kRoundTripChars = 48;
// Writes FormatRoundTrip(value)'s text at `out` (kRoundTripChars of room) and returns the
// end: no string per number, for the CSV rows of a sweep.
char* WriteRoundTrip(double value, char* out);

// Unit as people read it: "Ohm" -> "Ω", others unchanged.
std::string DisplayUnit(std::string_view unit);

}  // namespace knee::cli
