// Seeded random diode networks for convergence torture tests. The same seed and options
// give the same circuit on every platform (mt19937_64 and our own uniform mapping; no
// std:: distributions, whose algorithms are implementation-defined).
//
// Every network is solvable as drawn: voltage sources hang off new nodes (never a loop),
// every source reaches the network through a resistor of at least min_res, current
// sources sit in parallel with a resistor, and every node is joined to the rest by
// resistors or diodes. It therefore passes CheckTopology().
#pragma once

#include <cstdint>
#include <string>

#include "knee/circuit.h"

namespace knee::torture {

struct GeneratorOptions {
  int min_blocks = 2;  // structures (strings, banks, pairs, bridges, meshes, resistors)
  int max_blocks = 8;
  int max_sources = 3;            // voltage sources, at least one
  double max_source_volts = 1e4;  // V, magnitudes log-uniform in [1e-2, this]
  double max_source_amps = 0.1;   // A, Norton current sources, magnitudes log-uniform
  bool current_sources = true;
  double min_res = 1e-3;           // Ohm, resistors log-uniform in [min_res, max_res]
  double max_res = 1e9;            // Ohm
  double min_sat_current = 1e-20;  // A
  double max_sat_current = 1e-6;   // A
  double min_ideality = 0.8;
  double max_ideality = 4.0;
  double max_series_res = 1e3;   // Ohm; a third of the parts have none
  double min_breakdown_v = 1.0;  // V; half of the parts have a breakdown
  double max_breakdown_v = 1e3;  // V
  double min_temp = -40.0;       // degC, circuit temperature
  double max_temp = 125.0;
  // eV; when max_bandgap > 0 every part draws its bandgap uniformly from this range and
  // sets sat_temp_exp = 3 and ref_temp = 25 degC itself (the default family leaves the
  // part's defaults, and draws no extra numbers, so its seeds keep their circuits).
  double min_bandgap = 0.0;
  double max_bandgap = 0.0;
};

// Families beyond the default one, for the exact law at its extremes (docs/solver.md,
// "The law at its extremes"):
// cold: -269..-100 degC, the default saturation currents, bandgaps 0.66..1.42 eV
//   (germanium to gallium arsenide, recalled from memory): area*Is(T) far below the
//   smallest double;
// wide-bandgap: -60..400 degC, saturation currents 1e-45..1e-30 A, idealities 1..2.5,
//   bandgaps 2.3..3.4 eV (gallium phosphide to gallium nitride, recalled from memory);
// extreme: -269..400 degC, 1e-45..1e-6 A, bandgaps 0.66..3.4 eV, the default idealities.
GeneratorOptions ColdFamily();
GeneratorOptions WideBandgapFamily();
GeneratorOptions ExtremeFamily();
// The family of that name ("default", "cold", "wide-bandgap", "extreme"), or false.
bool FamilyNamed(const std::string& name, GeneratorOptions* options);

// A random network for `seed`. Node and element names are unique and parser-legal.
Circuit GenerateNetwork(uint64_t seed, const GeneratorOptions& options = {});

// The circuit as .knee text (netlist-format.md), numbers written to round-trip, with a
// `bias` request: for reproducing a case with the knee command and for fuzz seeds.
std::string ToNetlist(const Circuit& circuit);

}  // namespace knee::torture
