#include "design_state.h"

#include <algorithm>

#include "errors.h"
#include "knee/design_steps.h"

namespace knee::python {
namespace {

StatePtr Elaborated(std::string source, Netlist netlist, Overrides overrides) {
  Result<Design> design = ElaborateChecked(netlist, overrides);
  if (!design) RaiseNetlistError(design.errors(), source);
  return std::make_shared<const DesignState>(DesignState{
      std::move(source), std::move(netlist), std::move(overrides), std::move(design).value()});
}

}  // namespace

StatePtr MakeState(std::string source, const std::string& file_name, const Overrides& overrides) {
  Result<Netlist> netlist = ParseNetlist(source, file_name);
  if (!netlist) RaiseNetlistError(netlist.errors(), source);
  return Elaborated(std::move(source), std::move(netlist).value(), overrides);
}

StatePtr WithOverride(const StatePtr& state, const std::string& name,
                      const std::string& value_text) {
  Overrides overrides = state->overrides;
  std::erase_if(overrides.sets, [&](const Override& o) { return o.name == name; });
  overrides.sets.push_back({name, value_text});
  return Elaborated(state->source, state->netlist, std::move(overrides));
}

}  // namespace knee::python
