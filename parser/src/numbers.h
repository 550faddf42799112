// Number literals (netlist-format.md, "Numbers") and the unit each value place expects.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

namespace knee {

struct NumberLiteral {
  double value = 0;             // SI prefix and % applied; kelvin not yet converted
  std::string_view unit;        // canonical: "V" "A" "Ohm" "W" "S" "F" "H" "s" "Hz" "K" "C" "%"
                                // or "" (a view of static storage)
  std::size_t unit_offset = 0;  // byte offset of the prefix/unit letters in the literal
};

struct NumberError {
  std::size_t offset = 0;  // byte offset of the fault in the literal
  std::size_t length = 1;  // bytes
  std::string message;
  std::string hint;
};

// Parses a whole literal ("-4k7", "2.5n", "100uA", "5%"). On failure fills *error and
// returns false.
bool ParseNumber(std::string_view text, NumberLiteral* out, NumberError* error);

// What a value place accepts.
struct ValuePlace {
  std::string_view what;  // "a resistor value", "sat_current"
  // "Ohm" "V" "A" "W": that unit or none; "C": degrees Celsius, K accepted and converted;
  // "": dimensionless (bare or %); "1/K": bare or % (per kelvin); "eV": bare number;
  // "*": any unit accepted and not converted (ranges without a target).
  std::string_view unit;
};

// Checks the unit of a literal written directly at a place; converts kelvin to degrees
// Celsius at temperature places. On failure fills message/hint (the fault is the unit).
bool ApplyPlace(const NumberLiteral& literal, std::string_view literal_text,
                const ValuePlace& place, double* value, std::string* message, std::string* hint);

// A resistance the circuit can use: positive and a normal double (at least about
// 2.2e-308 Ohm), so that its conductance 1/r is finite; a subnormal value would give an
// infinite conductance. An infinite resistance is no resistor (leave it out).
inline constexpr const char* kResistanceRule =
    "> 0 and a normal number (at least 2.2e-308 Ohm, so that its conductance is finite)";
bool UsableResistance(double ohms);

// "ohms (Ohm, ohm or Ω) or no unit", ...
std::string DescribeUnit(std::string_view place_unit);

}  // namespace knee
