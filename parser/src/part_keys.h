// The keys of 'part NAME diode ...' (docs/netlist-format.md, "Part keys"): their
// units, their rules, defaults, and how they map onto DiodeModel.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "knee/circuit.h"
#include "numbers.h"

namespace knee {

struct PartKeyInfo {
  const char* key;
  const char* unit;  // a ValuePlace unit: "A" "V" "W" "Ohm" "C" "" "1/K" "eV" "K/W"
  const char* rule;  // "> 0", ">= 0", "finite", "above absolute zero"
};

const PartKeyInfo* FindPartKey(std::string_view key);
std::vector<std::string> PartKeyNames();
ValuePlace PartKeyPlace(const PartKeyInfo& info);
// Whether `value` obeys the key's rule.
bool PartKeyValueOk(const PartKeyInfo& info, double value);
// The rule a refused value breaks, in words ("> 0"; for a subnormal resistance, why).
std::string PartKeyRule(const PartKeyInfo& info, double value);
// Stores `value` in the model's field for the key.
void SetPartKey(DiodeModel* model, std::string_view key, double value);
// The model's value for the key; nullopt for a rating or breakdown_v that is not set.
std::optional<double> GetPartKey(const DiodeModel& model, std::string_view key);

// The hint for a key that is not a part key: the spelled-out key that `wrong` most likely
// means (a key written in capitals, or a common abbreviation such as IS, N or RS), else the
// nearest key by spelling, else the list of every key. `prefix` goes before a suggested
// key ("SIG." for a --set or sweep target).
std::string PartKeyHint(std::string_view wrong, std::string_view prefix = "");

}  // namespace knee
