#include "knee/part_report.h"

#include <algorithm>

#include "part_keys.h"
#include "syntax.h"

namespace knee {

std::vector<ResolvedPartKey> ResolvePartKeys(const Netlist& netlist, const Overrides& overrides,
                                             const Part& part) {
  const NetlistData& d = netlist.data();
  const auto statement = std::find_if(d.parts.begin(), d.parts.end(),
                                      [&](const PartStmt& p) { return p.name == part.name; });
  auto given = [&](const std::string& key) {
    if (statement != d.parts.end()) {
      for (const PartKeyStmt& k : statement->keys) {
        if (k.key == key) return true;
      }
    }
    return std::any_of(overrides.sets.begin(), overrides.sets.end(),
                       [&](const Override& o) { return o.name == part.name + "." + key; });
  };
  std::vector<ResolvedPartKey> keys;
  for (const std::string& key : PartKeyNames()) {
    const PartKeyInfo& info = *FindPartKey(key);
    keys.push_back({key, info.unit, GetPartKey(part.model, key), given(key)});
  }
  return keys;
}

}  // namespace knee
