// Loads a netlist and sweeps one target, printing "VALUE,QUANTITY" per point as the
// shortest text that reads back to the same double (as knee's CSV does):
// sweep_bridge FILE TARGET RANGE QUANTITY, for example
//   sweep_bridge bridge-rectifier.knee Vin -20..20:1 "(out.v - ret.v)"
#include <fmt/format.h>  // knee::engine links {fmt}
#include <knee/design_steps.h>
#include <knee/diagnostics.h>

#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

int Fail(const std::vector<knee::Diagnostic>& errors, const std::string& text) {
  std::fputs(knee::FormatDiagnostics(errors, text).c_str(), stderr);
  return 2;
}

int main(int argc, char** argv) {
  if (argc != 5) return std::fputs("usage: sweep_bridge FILE TARGET RANGE QUANTITY\n", stderr), 2;
  auto text = knee::ReadNetlistFile(argv[1]);
  if (!text) return Fail(text.errors(), "");
  auto netlist = knee::ParseNetlist(*text, argv[1]);
  if (!netlist) return Fail(netlist.errors(), *text);
  auto design = knee::ElaborateChecked(*netlist, {});
  if (!design) return Fail(design.errors(), *text);
  const knee::Circuit& circuit = design->circuit;
  auto axis = knee::ResolveSweepAxis(argv[2], argv[3], *netlist, circuit, {}, {});
  if (!axis) return Fail(axis.errors(), "");
  auto quantity = knee::ParseQuantity(argv[4], circuit, {});
  if (!quantity) return Fail(quantity.errors(), "");

  const std::vector<knee::SweepAxis> axes{*axis};
  const knee::SweepGrid grid = knee::MakeSweepGrid(axes);
  const knee::SweepBlocks blocks = knee::CutIntoBlocks(grid, knee::SweepOptions{}.block_size);
  std::vector<double> values(static_cast<size_t>(grid.PointCount()), NAN);
  knee::RunSweep(circuit, grid, blocks, 0, blocks.total, knee::MakePointApplier(*netlist, {}, axes),
                 knee::SolverOptions{}, knee::SweepOptions{},
                 [&](long long i, const knee::SolveSummary&, const knee::Solution* solution) {
                   if (solution) values[static_cast<size_t>(i)] = quantity->Evaluate(*solution);
                 });
  for (size_t i = 0; i < values.size(); ++i) {
    fmt::print("{},{}\n", axis->values[i], values[i]);
  }
  return 0;
}
