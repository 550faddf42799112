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
};

// A random network for `seed`. Node and element names are unique and parser-legal.
Circuit GenerateNetwork(uint64_t seed, const GeneratorOptions& options = {});

// The circuit as .knee text (netlist-format.md), numbers written to round-trip, with a
// `bias` request: for reproducing a case with the knee command and for fuzz seeds.
std::string ToNetlist(const Circuit& circuit);

}  // namespace knee::torture
