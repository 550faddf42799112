// The full convergence torture run: solves `count` generated networks (seeds first ..
// first+count-1), verifies each solution independently, and prints the failures, the
// failure count and the distribution of Newton steps.
//   run_torture [count] [first_seed] [--jobs N] [--verbose] [--family NAME]
//   run_torture [--family NAME] --netlist SEED     prints that network as .knee text
// NAME: default, cold, wide-bandgap, extreme (network_generator.h). Exit status 0 when
// every network converged and verified, 1 otherwise, 2 on bad usage. The summary counts
// apart the wrong numbers (a converged answer the independent check rejects: knee would
// print it with exit 0) and the networks without an answer (knee's exit 1, with a reason).
#include <fmt/format.h>

#include <algorithm>
#include <atomic>
#include <cstdint>
#include <cstdlib>
#include <map>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

#include "torture/torture_case.h"

namespace {

bool ParseCount(const char* text, long long* out) {
  char* end = nullptr;
  const long long value = std::strtoll(text, &end, 10);
  if (end == text || *end != '\0' || value < 0) return false;
  *out = value;
  return true;
}

}  // namespace

int main(int argc, char** argv) {
  long long count = 10000;
  long long first = 1;
  long long jobs = std::max(1u, std::thread::hardware_concurrency());
  bool verbose = false;
  knee::torture::GeneratorOptions family;
  std::vector<std::string> positional;
  for (int a = 1; a < argc; ++a) {
    const std::string arg = argv[a];
    if (arg == "--jobs" && a + 1 < argc) {
      if (!ParseCount(argv[++a], &jobs) || jobs < 1) {
        fmt::print(stderr, "run_torture: --jobs wants a positive whole number\n");
        return 2;
      }
    } else if (arg == "--family" && a + 1 < argc) {
      if (!knee::torture::FamilyNamed(argv[++a], &family)) {
        fmt::print(stderr, "run_torture: --family is default, cold, wide-bandgap or extreme\n");
        return 2;
      }
    } else if (arg == "--netlist" && a + 1 < argc) {
      long long seed = 0;
      if (!ParseCount(argv[++a], &seed)) return 2;
      fmt::print("{}", knee::torture::ToNetlist(
                           knee::torture::GenerateNetwork(static_cast<uint64_t>(seed), family)));
      return 0;
    } else if (arg == "--verbose") {
      verbose = true;
    } else {
      positional.push_back(arg);
    }
  }
  if (positional.size() > 2 ||
      (positional.size() >= 1 && !ParseCount(positional[0].c_str(), &count)) ||
      (positional.size() == 2 && !ParseCount(positional[1].c_str(), &first))) {
    fmt::print(stderr, "usage: run_torture [count] [first_seed] [--jobs N] [--verbose]\n");
    return 2;
  }

  std::vector<knee::torture::CaseResult> results(static_cast<size_t>(count));
  std::atomic<long long> next{0};
  std::vector<std::thread> workers;
  for (long long w = 0; w < jobs; ++w) {
    workers.emplace_back([&] {
      for (long long k = next++; k < count; k = next++) {
        results[static_cast<size_t>(k)] =
            knee::torture::RunCase(static_cast<uint64_t>(first + k), family);
      }
    });
  }
  for (std::thread& t : workers) t.join();

  long long failed = 0;
  long long wrong = 0;
  std::map<std::string, long long> unanswered;  // by status
  std::vector<int> steps;
  std::map<std::string, long long> aids;
  long long elements = 0;
  long long with_faint = 0;
  double worst_residual = 0;
  for (const knee::torture::CaseResult& r : results) {
    elements += r.elements;
    if (!r.ok) {
      ++failed;
      if (r.converged) {
        ++wrong;
      } else {
        unanswered[r.status.empty() ? "setup" : r.status]++;
      }
      fmt::print("FAIL seed {}: {}\n", r.seed, r.problem);
      continue;
    }
    steps.push_back(r.newton_steps);
    if (r.undetermined_nodes > 0) ++with_faint;
    aids[r.aids.empty() ? "none" : r.aids]++;
    worst_residual = std::max(worst_residual, r.max_kcl_residual);
    if (verbose) fmt::print("seed {}: {} steps, aids: {}\n", r.seed, r.newton_steps, r.aids);
  }
  std::sort(steps.begin(), steps.end());
  fmt::print("torture: {} networks (seeds {}..{}), {} elements in all\n", count, first,
             first + count - 1, elements);
  fmt::print("torture: {} failed, {} converged and verified\n", failed, steps.size());
  fmt::print("torture: wrong numbers (converged, rejected by the independent check): {}\n", wrong);
  for (const auto& [status, n] : unanswered) {
    fmt::print("torture: no answer ({}): {}\n", status, n);
  }
  if (!steps.empty()) {
    auto pct = [&](double p) {
      return steps[std::min(steps.size() - 1,
                            static_cast<size_t>(p * static_cast<double>(steps.size())))];
    };
    fmt::print("newton steps: min {}  median {}  p90 {}  p99 {}  max {}\n", steps.front(), pct(0.5),
               pct(0.9), pct(0.99), steps.back());
    const int edges[] = {5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000};
    int lo = 0;
    for (int edge : edges) {
      const auto n =
          std::count_if(steps.begin(), steps.end(), [&](int s) { return s > lo && s <= edge; });
      if (n) fmt::print("  {:>5}..{:<5} steps: {}\n", lo + 1, edge, n);
      lo = edge;
    }
    const auto rest = std::count_if(steps.begin(), steps.end(), [&](int s) { return s > lo; });
    if (rest) fmt::print("  > {:<10} steps: {}\n", lo, rest);
    fmt::print("aids needed:\n");
    for (const auto& [name, n] : aids) fmt::print("  {}: {}\n", name, n);
    fmt::print("largest KCL residual of a verified solution: {:.3g} A\n", worst_residual);
    fmt::print("solutions with undetermined nodes: {}\n", with_faint);
  }
  return failed == 0 ? 0 : 1;
}
