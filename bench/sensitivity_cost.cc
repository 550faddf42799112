// Sensitivity cost: all derivatives of one quantity by the adjoint method against one
// Newton step of the same circuit, measured side by side in one process.
//
//   knee_sensitivity_bench [--stages N] [--seconds S]
//
// The circuit: a 5 V source feeding N ladder stages (a 100 Ohm series resistor, then a
// diode to gnd with its own temp=, as bench/gen_circuits.py's ladder plus the
// temperature), so 3N + 1 element numbers and the part's keys are differentiated.
// Prints one line of key=value pairs:
//   unknowns, targets        size of the MNA matrix, numbers differentiated
//   step_s                   best time of one step of knee's Newton loop body at the
//                            solution (assemble, residual test, refactor, solve, update,
//                            update test), as knee_step_bench's loop_s
//   sensitivity_s            best time of BiasSolver::Sensitivity of the last node's
//                            voltage: the right-hand side, the transposed solve with its
//                            refinement, and every device's dF/dp
//   ratio = sensitivity_s / step_s
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <functional>
#include <string>
#include <vector>

#include "klu_solver.h"
#include "knee/sensitivity.h"
#include "knee/solver.h"
#include "mna.h"
#include "newton.h"

namespace {

using Clock = std::chrono::steady_clock;

double BestTime(const std::function<void()>& body, double seconds) {
  double best = 1e300, total = 0;
  for (int rep = 0; rep < 3 || total < seconds; ++rep) {
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
  std::fprintf(stderr, "knee_sensitivity_bench: %s\n", message.c_str());
  std::exit(2);
}

knee::Circuit Ladder(int stages) {
  knee::Circuit c;
  c.title = "sensitivity bench ladder";
  knee::DiodeModel m;
  m.sat_current = 2e-9;
  m.ideality = 1.9;
  m.breakdown_v = 75;
  m.breakdown_i = 5e-6;
  c.parts.push_back({"sig", m, {}});
  const auto add = [&](knee::ElementKind kind, std::string name, int a, int b, double value) {
    knee::Element e;
    e.kind = kind;
    e.name = c.Keep(name);
    e.node_a = a;
    e.node_b = b;
    e.value = value;
    if (kind == knee::ElementKind::kDiode) {
      e.part = 0;
      e.temp = 25.0;
    }
    c.elements.push_back(std::move(e));
  };
  c.AddNode("src");
  add(knee::ElementKind::kVoltageSource, "V1", 1, 0, 5.0);
  for (int k = 1; k <= stages; ++k) {
    c.AddNode("n" + std::to_string(k));
    const int node = static_cast<int>(c.nodes.size()) - 1;
    add(knee::ElementKind::kResistor, "R" + std::to_string(k), node - 1, node, 100.0);
    add(knee::ElementKind::kDiode, "D" + std::to_string(k), node, 0, 0.0);
  }
  return c;
}

}  // namespace

int main(int argc, char** argv) {
  int stages = 100000;
  double seconds = 1.0;
  for (int i = 1; i < argc; ++i) {
    if (std::string(argv[i]) == "--stages" && i + 1 < argc) stages = std::atoi(argv[++i]);
    if (std::string(argv[i]) == "--seconds" && i + 1 < argc) seconds = std::atof(argv[++i]);
  }
  const knee::Circuit circuit = Ladder(stages);
  knee::SolverOptions options;
  auto solver = knee::BiasSolver::Create(circuit, options);
  if (!solver) Die("BiasSolver::Create: " + solver.errors().front().message);
  knee::Solution solution;
  const knee::SolveSummary summary = (*solver)->Solve(&solution);
  if (summary.status != knee::SolveStatus::kConverged) Die("no solution: " + summary.detail);

  const knee::WeightedQuantity q{{knee::QuantityKind::kNodeVoltage, stages + 1}, 1.0};
  knee::CircuitGradient gradient;
  const double sensitivity_s = BestTime(
      [&] {
        if (!(*solver)->Sensitivity({&q, 1}, &gradient).ok()) Die("sensitivity failed");
      },
      seconds);
  const size_t targets = knee::SensitivityTargets(circuit).size();

  // One step of knee's Newton loop body at the solution, on knee's own objects.
  using knee::internal::AssemblyAids;
  knee::internal::MnaSystem mna(circuit);
  knee::internal::KluSolver klu;
  if (klu.Analyze(mna.size(), mna.col_ptr(), mna.row_index()) !=
      knee::internal::LinearStatus::kOk) {
    Die("analyze: " + klu.message());
  }
  const std::vector<double> x_star((*solver)->unknowns().begin(), (*solver)->unknowns().end());
  std::vector<double> x = x_star, dx(x.size());
  AssemblyAids aids;
  aids.limit_junctions = options.junction_limiting;
  mna.BeginRun(x);
  mna.Assemble(x, aids);
  if (klu.Factor(mna.values()) != knee::internal::LinearStatus::kOk) Die("factor");
  const double step_s = BestTime(
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
  // The adjoint's parts on the same objects: a transposed solve, the Jacobian product of
  // a refinement, the devices' dF/dp pass.
  x = x_star;
  mna.Assemble(x, AssemblyAids{});
  if (klu.Refactor(mna.values()) != knee::internal::LinearStatus::kOk) Die("refactor");
  std::vector<double> lambda(x.size(), 1e-3), product(x.size());
  const double tsolve_s = BestTime([&] { klu.SolveTransposed(lambda); }, seconds / 4);
  const double product_s = BestTime([&] { mna.MultiplyJacobian(lambda, product); }, seconds / 4);
  const double pass_s = BestTime(
      [&] {
        gradient.Reset(circuit);
        mna.devices().AddSensitivity(circuit, x, lambda, &gradient);
      },
      seconds / 4);
  std::printf(
      "unknowns=%d targets=%zu step_s=%.6e sensitivity_s=%.6e ratio=%.3f tsolve_s=%.6e "
      "product_s=%.6e pass_s=%.6e\n",
      mna.size(), targets, step_s, sensitivity_s, sensitivity_s / step_s, tsolve_s, product_s,
      pass_s);
  return 0;
}
