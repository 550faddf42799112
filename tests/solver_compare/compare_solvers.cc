// Compares the classic ladder with the potential method on the torture suite's random
// networks (tests/torture): per method the failures, the Newton steps (mean and worst)
// and the solve time; for every network both solve, the largest relative difference of
// their node voltages. Every reported solution is verified by its KCL residual (the
// solver's own verification) and again by the torture suite's independent verifier.
//   compare_solvers [count] [first_seed]
//   compare_solvers --trace SEED [potential|classic]   (one network, every step printed)
//   compare_solvers --explain SEED   (one network, both solutions node by node)
//   compare_solvers --named [count] [first_seed]   (per network, the nodes each method
//                                                    names undetermined)
// Exit status 0 when the potential method solved and verified every network and both
// methods agree to 1e-9 relative wherever both converged; 1 otherwise; 2 on bad usage.
#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string>
#include <vector>

#include "knee/solver.h"
#include "torture/network_generator.h"
#include "torture/verify_solution.h"

namespace {

using knee::Circuit;
using knee::Solution;
using knee::SolverMethod;
using knee::SolveStatus;

constexpr double kAgreement = 1e-9;      // relative, the acceptance bound of issue 8
constexpr double kVoltageFloor = 1e-12;  // V: below this two voltages count as equal
// A: nodes whose every element current is below this (the default abs_current_tol) in
// both solutions are faint: KCL at that tolerance does not fix their voltages.
constexpr double kFaintCurrent = 1e-12;
constexpr int kExcusedHops = 2;  // ExcusedNodes: elements from an undetermined node

struct Tally {
  const char* name = "";
  long long failed = 0;
  long long unverified = 0;
  long long steps = 0;
  int worst_steps = 0;
  long long worst_seed = 0;
  double seconds = 0;
  double worst_residual = 0;
  std::vector<std::string> failures;
};

struct Run {
  bool ok = false;
  Solution solution;
  std::vector<std::string> loose;  // nodes the solver reports as not fixed by KCL
};

Run SolveWith(const Circuit& circuit, SolverMethod method, uint64_t seed, Tally* tally) {
  knee::SolverOptions options;
  options.method = method;
  Run run;
  const auto start = std::chrono::steady_clock::now();
  auto solver = knee::BiasSolver::Create(circuit, options);
  knee::SolveSummary summary;
  if (solver) summary = (*solver)->Solve(&run.solution);
  run.loose = summary.undetermined_nodes;
  tally->seconds += std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  tally->steps += summary.newton_steps;
  if (summary.newton_steps > tally->worst_steps) {
    tally->worst_steps = summary.newton_steps;
    tally->worst_seed = static_cast<long long>(seed);
  }
  if (!solver || summary.status != SolveStatus::kConverged) {
    ++tally->failed;
    tally->failures.push_back(fmt::format("seed {}: {}: {}", seed, ToString(summary.status),
                                          solver ? summary.detail : "setup failed"));
    return run;
  }
  const knee::torture::Verification check = knee::torture::VerifySolution(circuit, run.solution);
  if (!check.ok) {
    ++tally->unverified;
    tally->failures.push_back(fmt::format("seed {}: independent check: {}", seed, check.problem));
    return run;
  }
  tally->worst_residual = std::max(tally->worst_residual, summary.max_kcl_residual);
  run.ok = true;
  return run;
}

// The nodes at which the two solutions may differ beyond round-off: those either solver
// names undetermined, and every node an element joins to one of them. Such a neighbour
// is determined (a stray current of the tolerance moves it less than the solver's
// threshold), but the current its undetermined neighbour sends it depends on where that
// neighbour ended, so its voltage differs between the methods by that current times its
// own driving-point resistance (seed 9849: 6e-8 V at a node beside a group 72 V apart).
std::vector<char> ExcusedNodes(const Circuit& circuit, const Run& a, const Run& b) {
  std::vector<char> named(circuit.nodes.size(), 0);
  for (const Run* r : {&a, &b}) {
    for (const std::string& name : r->loose) {
      const int n = circuit.FindNode(name);
      if (n > 0) named[static_cast<size_t>(n)] = 1;
    }
  }
  std::vector<char> excused = named;
  for (int hop = 0; hop < kExcusedHops; ++hop) {
    const std::vector<char> reached = excused;
    for (const knee::Element& e : circuit.elements) {
      const auto p = static_cast<size_t>(e.node_a);
      const auto q = static_cast<size_t>(e.node_b);
      if (reached[p] && q > 0) excused[q] = 1;
      if (reached[q] && p > 0) excused[p] = 1;
    }
  }
  return excused;
}

bool ParseCount(const char* text, long long* out) {
  char* end = nullptr;
  const long long value = std::strtoll(text, &end, 10);
  if (end == text || *end != '\0' || value < 0) return false;
  *out = value;
  return true;
}

// One network with the per-step records of the solver, for looking into a failure.
int TraceOne(uint64_t seed, SolverMethod method) {
  const Circuit circuit = knee::torture::GenerateNetwork(seed);
  knee::SolverOptions options;
  options.method = method;
  auto solver = knee::BiasSolver::Create(circuit, options);
  if (!solver) return 2;
  (*solver)->set_trace(true);
  Solution solution;
  const knee::SolveSummary summary = (*solver)->Solve(&solution);
  for (const knee::NewtonStepRecord& r : (*solver)->trace()) {
    fmt::print(
        "{:4} {:<20} |F| {:9.3e} |dx| {:9.3e} t {:9.3e} phi {:13.6e} dphi {:10.3e} "
        "(round-off {:8.2e}) trials {}\n",
        r.step, r.phase, r.max_residual, r.max_update, r.step_length, r.potential,
        r.potential_change, r.potential_roundoff, r.line_search_trials);
  }
  fmt::print("{}: {} steps: {}\n", ToString(summary.status), summary.newton_steps, summary.detail);
  return summary.status == SolveStatus::kConverged ? 0 : 1;
}

// One network: every node's voltage from both solvers, their difference and each
// solution's double-precision resolution (RoundOffResolution).
int ExplainOne(uint64_t seed) {
  const Circuit circuit = knee::torture::GenerateNetwork(seed);
  Tally ignored;
  const Run a = SolveWith(circuit, SolverMethod::kClassic, seed, &ignored);
  const Run b = SolveWith(circuit, SolverMethod::kPotential, seed, &ignored);
  if (!a.ok || !b.ok) {
    for (const std::string& f : ignored.failures) fmt::print("{}\n", f);
    return 1;
  }
  const std::vector<double> res_a = knee::torture::RoundOffResolution(circuit, a.solution);
  const std::vector<double> res_b = knee::torture::RoundOffResolution(circuit, b.solution);
  fmt::print("{:<8} {:>22} {:>22} {:>10} {:>10} {:>10}\n", "node", "classic [V]", "potential [V]",
             "|diff|", "res a", "res b");
  for (size_t n = 1; n < circuit.nodes.size(); ++n) {
    const double va = a.solution.node_voltage[n];
    const double vb = b.solution.node_voltage[n];
    fmt::print("{:<8} {:>22.15g} {:>22.15g} {:>10.3g} {:>10.3g} {:>10.3g}\n", circuit.nodes[n], va,
               vb, std::fabs(va - vb), res_a[n], res_b[n]);
  }
  for (const Run* r : {&a, &b}) {
    for (const std::string& name : r->loose) fmt::print("named loose: {}\n", name);
  }
  return 0;
}

// Per network with any, the nodes each method names undetermined: two runs of this
// diffed show which networks a change of the criterion touches.
int NameAll(long long count, long long first) {
  for (long long k = 0; k < count; ++k) {
    const auto seed = static_cast<uint64_t>(first + k);
    const Circuit circuit = knee::torture::GenerateNetwork(seed);
    for (SolverMethod method : {SolverMethod::kClassic, SolverMethod::kPotential}) {
      Tally ignored;
      const Run r = SolveWith(circuit, method, seed, &ignored);
      if (r.loose.empty()) continue;
      fmt::print("seed {} {}: {}\n", seed, ToString(method), fmt::join(r.loose, " "));
    }
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc >= 2 && std::string(argv[1]) == "--named") {
    long long count = 10000;
    long long first = 1;
    if (argc > 4 || (argc >= 3 && !ParseCount(argv[2], &count)) ||
        (argc == 4 && !ParseCount(argv[3], &first))) {
      return 2;
    }
    return NameAll(count, first);
  }
  if (argc == 3 && std::string(argv[1]) == "--explain") {
    long long seed = 0;
    if (!ParseCount(argv[2], &seed)) return 2;
    return ExplainOne(static_cast<uint64_t>(seed));
  }
  if (argc >= 3 && std::string(argv[1]) == "--trace") {
    long long seed = 0;
    if (!ParseCount(argv[2], &seed)) return 2;
    const bool classic = argc >= 4 && std::string(argv[3]) == "classic";
    return TraceOne(static_cast<uint64_t>(seed),
                    classic ? SolverMethod::kClassic : SolverMethod::kPotential);
  }
  long long count = 10000;
  long long first = 1;
  if (argc > 3 || (argc >= 2 && !ParseCount(argv[1], &count)) ||
      (argc == 3 && !ParseCount(argv[2], &first))) {
    fmt::print(stderr, "usage: compare_solvers [count] [first_seed]\n");
    return 2;
  }
  Tally classic;
  classic.name = "classic ladder";
  Tally potential;
  potential.name = "potential method";
  long long both = 0;
  long long disagree = 0;
  long long disagree_scaled = 0;  // relative to the circuit's largest node voltage
  long long disagree_firm = 0;    // at nodes that are not faint
  std::vector<long long> firm_seeds;
  long long disagree_firm_scaled = 0;
  std::vector<long long> firm_scaled_seeds;
  // Beyond each node's double-precision resolution (RoundOffResolution of either
  // solution): at every node, and at nodes neither solver names loose.
  long long disagree_resolved = 0;
  long long disagree_resolved_fixed = 0;
  std::vector<long long> resolved_seeds;
  std::vector<long long> resolved_loose_seeds;
  double worst_resolved = 0;  // |difference| / (1e-9 |v| + resolutions)
  long long worst_resolved_seed = 0;
  double worst_scaled = 0;
  double worst_difference = 0;
  long long worst_difference_seed = 0;
  for (long long k = 0; k < count; ++k) {
    const auto seed = static_cast<uint64_t>(first + k);
    const Circuit circuit = knee::torture::GenerateNetwork(seed);
    const Run a = SolveWith(circuit, SolverMethod::kClassic, seed, &classic);
    const Run b = SolveWith(circuit, SolverMethod::kPotential, seed, &potential);
    if (!a.ok || !b.ok) continue;
    ++both;
    double difference = 0;
    double scaled_difference = 0;
    double circuit_scale = kVoltageFloor;
    for (size_t n = 1; n < circuit.nodes.size(); ++n) {
      circuit_scale = std::max(circuit_scale, std::fabs(a.solution.node_voltage[n]));
    }
    // The largest current of any element at each node, in either solution: a node whose
    // currents are all below the KCL tolerance is not fixed by it (a faint node).
    std::vector<double> largest(circuit.nodes.size(), 0.0);
    for (size_t e = 0; e < circuit.elements.size(); ++e) {
      const double i = std::max(std::fabs(a.solution.element_current[e]),
                                std::fabs(b.solution.element_current[e]));
      for (int n : {circuit.elements[e].node_a, circuit.elements[e].node_b}) {
        largest[static_cast<size_t>(n)] = std::max(largest[static_cast<size_t>(n)], i);
      }
    }
    double firm_difference = 0;
    double firm_scaled = 0;
    std::vector<char> loose = ExcusedNodes(circuit, a, b);
    for (size_t n = 1; n < circuit.nodes.size(); ++n) {
      const double va = a.solution.node_voltage[n];
      const double vb = b.solution.node_voltage[n];
      const double scale = std::max({std::fabs(va), std::fabs(vb), kVoltageFloor});
      difference = std::max(difference, std::fabs(va - vb) / scale);
      scaled_difference = std::max(scaled_difference, std::fabs(va - vb) / circuit_scale);
      if (largest[n] >= kFaintCurrent && !loose[n]) {
        firm_difference = std::max(firm_difference, std::fabs(va - vb) / scale);
        firm_scaled = std::max(firm_scaled, std::fabs(va - vb) / circuit_scale);
      }
    }
    const std::vector<double> res_a = knee::torture::RoundOffResolution(circuit, a.solution);
    const std::vector<double> res_b = knee::torture::RoundOffResolution(circuit, b.solution);
    bool beyond = false;
    bool beyond_fixed = false;
    for (size_t n = 1; n < circuit.nodes.size(); ++n) {
      const double va = a.solution.node_voltage[n];
      const double vb = b.solution.node_voltage[n];
      const double allowed = kAgreement * std::max({std::fabs(va), std::fabs(vb), kVoltageFloor}) +
                             res_a[n] + res_b[n];
      const double ratio = std::fabs(va - vb) / allowed;
      if (!(ratio <= 1.0)) {
        beyond = true;
        if (!loose[n]) beyond_fixed = true;
      }
      if (!loose[n] && ratio > worst_resolved) {
        worst_resolved = ratio;
        worst_resolved_seed = static_cast<long long>(seed);
      }
    }
    if (beyond) {
      ++disagree_resolved;
      if (!beyond_fixed && resolved_loose_seeds.size() < 20) {
        resolved_loose_seeds.push_back(static_cast<long long>(seed));
      }
    }
    if (beyond_fixed) {
      ++disagree_resolved_fixed;
      if (resolved_seeds.size() < 10) resolved_seeds.push_back(static_cast<long long>(seed));
    }
    if (firm_scaled > kAgreement) {
      ++disagree_firm_scaled;
      if (firm_scaled_seeds.size() < 10) firm_scaled_seeds.push_back(static_cast<long long>(seed));
    }
    if (firm_difference > kAgreement) {
      ++disagree_firm;
      if (firm_seeds.size() < 10) firm_seeds.push_back(static_cast<long long>(seed));
    }
    if (scaled_difference > kAgreement) ++disagree_scaled;
    worst_scaled = std::max(worst_scaled, scaled_difference);
    if (difference > worst_difference) {
      worst_difference = difference;
      worst_difference_seed = static_cast<long long>(seed);
    }
    if (difference > kAgreement) ++disagree;
  }
  for (const Tally* t : {&classic, &potential}) {
    for (const std::string& f : t->failures) fmt::print("{}: {}\n", t->name, f);
  }
  fmt::print("\n{} networks, seeds {}..{}\n\n", count, first, first + count - 1);
  fmt::print(
      "| method | failed | failed the independent check | mean Newton steps | worst (seed) "
      "| largest KCL residual | time |\n|---|---|---|---|---|---|---|\n");
  for (const Tally* t : {&classic, &potential}) {
    fmt::print("| {} | {} | {} | {:.2f} | {} ({}) | {:.2e} A | {:.2f} s |\n", t->name, t->failed,
               t->unverified, static_cast<double>(t->steps) / static_cast<double>(count),
               t->worst_steps, t->worst_seed, t->worst_residual, t->seconds);
  }
  fmt::print(
      "\nboth converged on {} networks; node voltages differ by more than {:g} relative "
      "(floor {:g} V) on {}; largest difference {:.2e} (seed {})\n",
      both, kAgreement, kVoltageFloor, disagree, worst_difference, worst_difference_seed);
  fmt::print(
      "relative to each circuit's largest node voltage: differ by more than {:g} on {}; "
      "largest {:.2e}\n",
      kAgreement, disagree_scaled, worst_scaled);
  fmt::print(
      "at nodes that are neither faint (some element current >= {:g} A) nor reported loose by "
      "either solver: differ by more than {:g} "
      "on {}{}{}\n",
      kFaintCurrent, kAgreement, disagree_firm, firm_seeds.empty() ? "" : "; seeds ",
      fmt::format("{}", fmt::join(firm_seeds, " ")));
  fmt::print("  and relative to the circuit's largest node voltage: on {}{}{}\n",
             disagree_firm_scaled, firm_scaled_seeds.empty() ? "" : "; seeds ",
             fmt::format("{}", fmt::join(firm_scaled_seeds, " ")));
  fmt::print(
      "beyond {:g} relative plus each node's double-precision resolution (|J^-1| times the "
      "equations' rounding, RoundOffResolution, of both solutions): differ on {} networks{}{}; at "
      "nodes that neither solver names loose: on {}{}{}; worst ratio {:.3g} (seed {})\n",
      kAgreement, disagree_resolved,
      resolved_loose_seeds.empty() ? "" : " (only at loose nodes: seeds ",
      fmt::format("{}{}", fmt::join(resolved_loose_seeds, " "),
                  resolved_loose_seeds.empty() ? "" : ")"),
      disagree_resolved_fixed, resolved_seeds.empty() ? "" : "; seeds ",
      fmt::format("{}", fmt::join(resolved_seeds, " ")), worst_resolved, worst_resolved_seed);
  return potential.failed == 0 && potential.unverified == 0 && disagree_resolved_fixed == 0 ? 0 : 1;
}
