// The continuation aids of the classic strategy: gmin stepping and source stepping, each
// a ladder of Newton runs warm-started from the rung before (docs/solver.md).
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "bias_impl.h"

namespace knee {

using internal::AssemblyAids;
using internal::NewtonExit;
using internal::NewtonOutcome;

namespace {

AssemblyAids WithGmin(double gmin) {
  AssemblyAids aids;
  aids.gmin = gmin;
  return aids;
}

AssemblyAids WithSourceScale(double scale) {
  AssemblyAids aids;
  aids.source_scale = scale;
  return aids;
}

}  // namespace

// gmin from gmin_start down by gmin_factor to gmin_stop, each rung warm-started from the
// previous one; a failed rung is retried with the geometric mean of it and the last good
// gmin. The shunt is then removed by the caller's final plain Newton run.
bool BiasSolver::Impl::GminLadder(SolveSummary* s, std::string* log) {
  double g = options.gmin_start;
  double last_good = -1.0;
  int retries = 0;
  while (true) {
    saved = x;
    const NewtonOutcome out = Run(WithGmin(g), fmt::format("gmin {:.3g}", g), s);
    if (out.exit == NewtonExit::kConverged) {
      if (g <= options.gmin_stop) return true;
      last_good = g;
      g = std::max(g / options.gmin_factor, options.gmin_stop);
      continue;
    }
    x = saved;
    if (out.exit == NewtonExit::kFatal || last_good < 0.0 ||
        ++retries > tuning.continuation.max_gmin_retries) {
      *log += fmt::format("; gmin stepping stopped at gmin {:.3g} S: {}", g, out.detail);
      return false;
    }
    g = std::sqrt(last_good * g);
  }
}

// Every independent source ramped from 0 to 100 % in source_steps equal steps; a failed
// step is halved (and the step grows back after a success).
bool BiasSolver::Impl::SourceLadder(SolveSummary* s, std::string* log) {
  const double full_step = 1.0 / options.source_steps;
  double done = 0.0;
  double step = full_step;
  int retries = 0;
  std::fill(x.begin(), x.end(), 0.0);
  for (int rung = 0; rung < tuning.continuation.max_source_rungs; ++rung) {
    const double target = std::min(1.0, done + step);
    saved = x;
    const NewtonOutcome out =
        Run(WithSourceScale(target), fmt::format("source {:.4g}%", 100.0 * target), s);
    if (out.exit == NewtonExit::kConverged) {
      done = target;
      if (done >= 1.0) return true;
      step = std::min(full_step, 2.0 * step);
      continue;
    }
    x = saved;
    if (out.exit == NewtonExit::kFatal || ++retries > tuning.continuation.max_source_retries) {
      *log += fmt::format("; source stepping stopped at {:.4g}%: {}", 100.0 * target, out.detail);
      return false;
    }
    step /= 2.0;
  }
  *log += fmt::format("; source stepping used {} runs and reached only {:.4g}%",
                      tuning.continuation.max_source_rungs, 100.0 * done);
  return false;
}

}  // namespace knee
