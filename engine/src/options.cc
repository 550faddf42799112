// SolverOptions validation (every rule in one place) and the names of SolveStatus.
#include <fmt/format.h>

#include <cmath>
#include <optional>
#include <string>

#include "knee/solver.h"

namespace knee {
namespace {

std::optional<std::string> Broken(const char* field, double value, const char* rule) {
  return fmt::format("solver option {} = {:g} breaks the rule: {}", field, value, rule);
}

bool Positive(double v) { return std::isfinite(v) && v > 0.0; }

}  // namespace

std::optional<std::string> Validate(const SolverOptions& o) {
  if (o.method != SolverMethod::kAuto && o.method != SolverMethod::kPotential &&
      o.method != SolverMethod::kClassic) {
    return Broken("method", static_cast<double>(static_cast<int>(o.method)),
                  "one of auto, potential, classic");
  }
  if (!Positive(o.abs_voltage_tol)) return Broken("abs_voltage_tol", o.abs_voltage_tol, "> 0 V");
  if (!Positive(o.abs_current_tol)) return Broken("abs_current_tol", o.abs_current_tol, "> 0 A");
  if (!(std::isfinite(o.rel_tol) && o.rel_tol > 0.0 && o.rel_tol <= 1e-2)) {
    return Broken("rel_tol", o.rel_tol, "in (0, 1e-2]");
  }
  if (o.max_newton_steps < 1) return Broken("max_newton_steps", o.max_newton_steps, ">= 1");
  if (!Positive(o.gmin_start)) return Broken("gmin_start", o.gmin_start, "> 0 S");
  if (!(std::isfinite(o.gmin_factor) && o.gmin_factor > 1.0)) {
    return Broken("gmin_factor", o.gmin_factor, "> 1");
  }
  if (!Positive(o.gmin_stop)) return Broken("gmin_stop", o.gmin_stop, "> 0 S");
  if (o.gmin_stop > o.gmin_start) {
    return Broken("gmin_stop", o.gmin_stop, "<= gmin_start");
  }
  if (o.source_steps < 1) return Broken("source_steps", o.source_steps, ">= 1");
  if (!Positive(o.verify_current_tol)) {
    return Broken("verify_current_tol", o.verify_current_tol, "> 0 A");
  }
  return std::nullopt;
}

const char* ToString(SolveStatus status) {
  switch (status) {
    case SolveStatus::kConverged:
      return "converged";
    case SolveStatus::kNoConvergence:
      return "no convergence";
    case SolveStatus::kSingularMatrix:
      return "singular matrix";
    case SolveStatus::kNonFinite:
      return "non-finite value";
    case SolveStatus::kVerificationFailed:
      return "verification failed";
    case SolveStatus::kNoSolution:
      return "no solution";
    case SolveStatus::kOutOfRange:
      return "out of range";
    case SolveStatus::kThermalRunaway:
      return "thermal runaway";
  }
  return "unknown";
}

const char* ToString(SolverMethod method) {
  switch (method) {
    case SolverMethod::kAuto:
      return "auto";
    case SolverMethod::kPotential:
      return "potential";
    case SolverMethod::kClassic:
      return "classic";
  }
  return "unknown";
}

}  // namespace knee
