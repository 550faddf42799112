// Step cost: one Newton step inside knee against the sparse-solver limit, measured side
// by side in one process on the same matrix.
//
//   knee_step_bench FILE [--seconds S] [--min-repeats N]
//
// Prints one line of key=value pairs:
//   unknowns, nnz            size of the MNA matrix
//   steps                    Newton steps of a cold BiasSolver::Solve
//   solve_s                  best time of a whole cold Solve (setup excluded): every step,
//                            the first full factorisation, the polishing step, the
//                            verification and the filling of the solution
//   step_s                   solve_s / steps: what one Newton step costs inside knee
//   loop_s                   best time of one step of knee's Newton loop body alone
//                            (assemble, refactor with its pivot checks, solve, update and
//                            both convergence tests), from the converged point
//   klu_s                    best time of a bare klu_refactor + klu_solve of the same matrix
//                            (the Jacobian at the solution), with no checks at all
//   ratio = step_s / klu_s, loop_ratio = loop_s / klu_s
//
//   knee_step_bench FILE --large
//
// Times each stage of `knee bias` once, in process: parse_s (ParseNetlist), elab_s
// (Elaborate), topo_s (CheckTopology), create_s (BiasSolver::Create: unknowns, pattern,
// KLU ordering), solve_s (Solve), with the Newton steps and the line count.
#include <klu.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

#include "klu_solver.h"
#include "knee/netlist.h"
#include "knee/solver.h"
#include "mna.h"
#include "newton.h"

namespace {

using Clock = std::chrono::steady_clock;

// Best time of one call of `body`, over repeats that together take about `seconds`
// (at least 3). The minimum is the figure least disturbed by other work on the machine.
int g_min_repeats = 3;

double BestTime(const std::function<void()>& body, double seconds) {
  double best = 1e300;
  double total = 0;
  for (int rep = 0; rep < g_min_repeats || total < seconds; ++rep) {
    const auto t0 = Clock::now();
    body();
    const double t = std::chrono::duration<double>(Clock::now() - t0).count();
    best = std::min(best, t);
    total += t;
    if (rep > 100000) break;
  }
  return best;
}

[[noreturn]] void Die(const std::string& message) {
  std::fprintf(stderr, "knee_step_bench: %s\n", message.c_str());
  std::exit(2);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) Die("usage: knee_step_bench FILE [--seconds S]");
  double seconds = 1.0;
  bool large = false;
  for (int i = 2; i < argc; ++i) {
    if (std::string(argv[i]) == "--seconds" && i + 1 < argc) seconds = std::atof(argv[++i]);
    if (std::string(argv[i]) == "--large") large = true;
    if (std::string(argv[i]) == "--min-repeats" && i + 1 < argc) {
      g_min_repeats = std::atoi(argv[++i]);
    }
  }
  std::ifstream in(argv[1], std::ios::binary);
  if (!in) Die(std::string("cannot read ") + argv[1]);
  std::stringstream text;
  text << in.rdbuf();
  const std::string source = text.str();
  auto t0 = Clock::now();
  const auto lap = [&t0] {
    const auto now = Clock::now();
    const double t = std::chrono::duration<double>(now - t0).count();
    t0 = now;
    return t;
  };
  knee::Result<knee::Netlist> netlist = knee::ParseNetlist(source, argv[1]);
  if (!netlist) Die("netlist does not parse: " + netlist.errors().front().message);
  const double parse_s = lap();
  knee::Result<knee::Design> design = knee::Elaborate(*netlist, {});
  if (!design) Die("netlist does not elaborate: " + design.errors().front().message);
  const double elab_s = lap();
  const knee::Circuit& circuit = design->circuit;
  // The classic ladder's Newton loop is the loop whose step cost is measured here
  // (loop_s times its body); the default (auto) runs the potential method on a cold
  // solve, whose steps factor afresh (docs/performance.md). --large times what
  // `knee bias` runs: the default.
  knee::SolverOptions options;
  if (!large) options.method = knee::SolverMethod::kClassic;
  if (large) {
    const long long lines = std::count(source.begin(), source.end(), '\n');
    lap();
    if (!knee::CheckTopology(circuit).empty()) Die("topology check failed");
    const double topo_s = lap();
    auto solver = knee::BiasSolver::Create(circuit, options);
    if (!solver) Die("BiasSolver::Create: " + solver.errors().front().message);
    const double create_s = lap();
    knee::Solution solution;
    const knee::SolveSummary summary = (*solver)->Solve(&solution);
    const double solve_s = lap();
    if (summary.status != knee::SolveStatus::kConverged) Die("no solution: " + summary.detail);
    std::printf(
        "lines=%lld unknowns=%d steps=%d parse_s=%.6e elab_s=%.6e topo_s=%.6e create_s=%.6e "
        "solve_s=%.6e\n",
        lines, (*solver)->unknown_count(), summary.newton_steps, parse_s, elab_s, topo_s, create_s,
        solve_s);
    return 0;
  }

  // knee: a whole cold solve, divided by its Newton steps.
  auto solver = knee::BiasSolver::Create(circuit, options);
  if (!solver) Die("BiasSolver::Create: " + solver.errors().front().message);
  knee::Solution solution;
  knee::SolveSummary summary = (*solver)->Solve(&solution);
  if (summary.status != knee::SolveStatus::kConverged) Die("no solution: " + summary.detail);
  const int steps = summary.newton_steps;
  const double solve_s = BestTime([&] { summary = (*solver)->Solve(&solution); }, seconds);
  // Setup and solve together, as a script would run them (the SciPy comparison).
  const double create_solve_s = BestTime(
      [&] {
        auto fresh = knee::BiasSolver::Create(circuit, options);
        if (!fresh || (*fresh)->Solve(&solution).status != knee::SolveStatus::kConverged) {
          Die("create + solve failed");
        }
      },
      seconds);
  if (summary.newton_steps != steps) Die("the step count changed between runs");
  const std::vector<double> x_star((*solver)->unknowns().begin(), (*solver)->unknowns().end());

  // knee's loop body alone, on knee's own objects, at the solution.
  using knee::internal::AssemblyAids;
  knee::internal::MnaSystem mna(circuit);
  knee::internal::KluSolver klu;
  if (klu.Analyze(mna.size(), mna.col_ptr(), mna.row_index()) !=
      knee::internal::LinearStatus::kOk) {
    Die("analyze: " + klu.message());
  }
  AssemblyAids aids;
  aids.limit_junctions = options.junction_limiting;
  std::vector<double> x = x_star;
  std::vector<double> dx(x.size());
  mna.BeginRun(x);
  mna.Assemble(x, aids);
  if (klu.Factor(mna.values()) != knee::internal::LinearStatus::kOk) Die("factor");
  const double loop_s = BestTime(
      [&] {
        const auto assembled = mna.Assemble(x, aids);
        const auto residual = knee::internal::CheckResidual(mna, options);
        if (klu.Refactor(mna.values()) != knee::internal::LinearStatus::kOk) Die("refactor");
        const auto f = mna.residual();
        for (size_t i = 0; i < dx.size(); ++i) dx[i] = -f[i];
        if (klu.Solve(dx) != knee::internal::LinearStatus::kOk) Die("solve");
        for (size_t i = 0; i < x.size(); ++i) x[i] += dx[i];
        const auto update = knee::internal::CheckUpdate(mna, options, dx, x);
        if (!assembled.finite || update.index < -1 || residual.index < -1) Die("?");
      },
      seconds);

  // The limit: a bare KLU refactor and solve of the same matrix, raw C calls.
  x = x_star;
  mna.Assemble(x, AssemblyAids{});
  std::vector<int> col_ptr(mna.col_ptr().begin(), mna.col_ptr().end());
  std::vector<int> row_index(mna.row_index().begin(), mna.row_index().end());
  std::vector<double> values(mna.values().begin(), mna.values().end());
  std::vector<double> rhs(mna.residual().begin(), mna.residual().end());
  std::vector<double> b(rhs.size());
  klu_common common;
  klu_defaults(&common);
  const int n = mna.size();
  klu_symbolic* symbolic = klu_analyze(n, col_ptr.data(), row_index.data(), &common);
  if (symbolic == nullptr) Die("klu_analyze");
  klu_numeric* numeric =
      klu_factor(col_ptr.data(), row_index.data(), values.data(), symbolic, &common);
  if (numeric == nullptr) Die("klu_factor");
  const double klu_s = BestTime(
      [&] {
        klu_refactor(col_ptr.data(), row_index.data(), values.data(), symbolic, numeric, &common);
        std::copy(rhs.begin(), rhs.end(), b.begin());
        klu_solve(symbolic, numeric, n, 1, b.data(), &common);
      },
      seconds);
  klu_free_numeric(&numeric, &common);
  klu_free_symbolic(&symbolic, &common);

  const double step_s = solve_s / steps;
  std::printf(
      "unknowns=%d nnz=%zu steps=%d create_solve_s=%.6e solve_s=%.6e step_s=%.6e loop_s=%.6e "
      "klu_s=%.6e ratio=%.3f "
      "loop_ratio=%.3f\n",
      n, values.size(), steps, create_solve_s, solve_s, step_s, loop_s, klu_s, step_s / klu_s,
      loop_s / klu_s);
  return 0;
}
