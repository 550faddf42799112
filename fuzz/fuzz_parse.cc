// Fuzz target: netlist text through ParseNetlist, Elaborate and the diagnostics renderer.
// Any crash, hang, sanitizer report or runaway allocation is a finding (fuzz/README.md).
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "knee/diagnostics.h"
#include "knee/netlist.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  knee::Result<knee::Netlist> netlist = knee::ParseNetlist(text, "fuzz.knee");
  if (!netlist) {
    (void)knee::FormatDiagnostics(netlist.errors(), text);
    return 0;
  }
  knee::Result<knee::Design> design = knee::Elaborate(*netlist, {});
  if (!design) {
    (void)knee::FormatDiagnostics(design.errors(), text);
    return 0;
  }
  // The default report columns resolve for every elaborated circuit.
  const knee::Circuit& circuit = design->circuit;
  for (size_t n = 1; n < circuit.nodes.size() && n < 64; ++n) {
    knee::Result<knee::QuantityExpr> q =
        knee::ParseQuantity(circuit.nodes[n] + ".v", circuit, knee::SourceLocation{});
    if (!q) __builtin_trap();
  }
  return 0;
}
