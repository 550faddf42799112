// The keys of 'part NAME diode ...' (netlist-format.md, "Diode parameters"): their
// units, their rules, and how they map onto DiodeModel.
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
  const char* unit;  // a ValuePlace unit: "A" "V" "W" "Ohm" "C" "" "1/K" "eV"
  const char* rule;  // "> 0", ">= 0", "finite", "above absolute zero"
};

const PartKeyInfo* FindPartKey(std::string_view key);
std::vector<std::string> PartKeyNames();
ValuePlace PartKeyPlace(const PartKeyInfo& info);
// Whether `value` obeys the key's rule.
bool PartKeyValueOk(const PartKeyInfo& info, double value);
// Stores `value` in the model's field for the key.
void SetPartKey(DiodeModel* model, std::string_view key, double value);
// The model's value for the key; nothing for an unset optional key (breakdown_v, ratings)
// or an unknown key.
std::optional<double> GetPartKey(const DiodeModel& model, std::string_view key);

}  // namespace knee
