// Self-heating (docs/thermal.md): the junction temperatures of heated diodes solved with
// the node voltages. The electrical unknowns are eliminated (each thermal iterate is a bias
// point at fixed junction temperatures, solved and verified by the stages of bias.cc), and
// Newton runs on the thermal balance
//   F_i(T) = T_i - T_a - s * sum_k C_ik P_k(T) = 0,
// C_ik = thermal_res_i [i == k] + R_sink [i, k on one sink], with the exact total
// derivatives dP_k/dT_j of the eliminated system (adjoint method): Newton on the whole
// coupled system in its reduced form. s is the thermal coupling (1 = the circuit as
// written); continuation in s from 0 is the aid where plain Newton fails, and where s
// cannot reach 1 because the branch folds (det J -> 0), no balance exists: thermal runaway.
#pragma once

#include <span>
#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/sensitivity.h"
#include "knee/solver.h"

namespace knee::internal {

// One diode whose junction temperature is an unknown.
struct HeatedDiode {
  int element = -1;
  int sink = -1;           // index into Circuit::heatsinks, or -1 (junction to ambient)
  double thermal_res = 0;  // K/W: junction to sink, or to ambient without a sink
};

// The heated diodes of a circuit: a diode without temp= whose part has thermal_res, or
// that sits on a heatsink (then a part without thermal_res is at the sink's temperature).
std::vector<HeatedDiode> HeatedDiodes(const Circuit& circuit);

// Copies every number of `from` into `to` where both have as many nodes, elements, parts
// and sinks (names stay); else copies all of it. Returns whether the structure matched.
bool RefreshNumbers(const Circuit& from, Circuit* to);

// Tuning of the thermal solve (documented in docs/thermal.md).
struct ThermalTuning {
  int max_iterations = 60;            // thermal Newton iterations per coupling value
  double max_step = 100.0;            // K, the most one iterate moves a junction temperature
  double balance_rel = 1e-13;         // |F_i| <= balance_rel * T_i (kelvin) ends the iteration
  double step_rel = 1e-12;            // or |dT_i| <= step_rel * T_i after a step
  double hottest = 1000.0;            // degC: an iterate beyond it has left the model's range
  double first_coupling_step = 0.25;  // continuation in s: the first step
  double min_coupling_step = 1e-7;    // relative to s: below it the branch has ended
  double fold_det = 0.05;             // |det J| below it at the branch's end: a fold (runaway)
  double scan_step = 5.0;             // K, the search for another balance of a single diode
  double scan_limit = 400.0;          // degC, where that search ends (docs/model.md's range)
};

// What the bias solver keeps for self-heating (bias_impl.h). Sized at set-up; the thermal
// iteration allocates nothing but what the bias points and their gradients do.
struct ThermalState {
  const Circuit* user = nullptr;  // the caller's circuit (temp is the ambient)
  Circuit heated;  // its copy: each heated diode's temp= holds its junction's iterate
  std::vector<HeatedDiode> diodes;
  ThermalTuning tuning;
  std::vector<double> temp;              // degC, per heated diode: the iterate
  std::vector<double> power;             // W, its dissipation at the last bias point
  std::vector<double> balance;           // K, F_i at the last bias point
  std::vector<double> jacobian;          // H x H, row-major: dF/dT at the last bias point
  std::vector<double> power_slope;       // H x H, row-major: dP_k/dT_j
  std::vector<double> sink_power;        // W, per Circuit::heatsinks
  CircuitGradient gradient;              // of one dissipation
  std::vector<double> electrical_start;  // the next bias point's start
  int newton_steps = 0;                  // of every bias point of the current solve
  std::vector<double> saved_temp, saved_electrical;  // the last converged coupling's point
  std::vector<double> unknowns;  // electrical unknowns, then temp, of the last converged solve
  bool converged = false;
};

}  // namespace knee::internal
