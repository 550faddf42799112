// One bias solve of a hand-built circuit with a chosen method, for engine tests.
#pragma once

#include <gtest/gtest.h>

#include <vector>

#include "knee/solver.h"

namespace knee::testing {

// Creates a solver with `method` (other options at their defaults) and solves into *s;
// with `trace`, the per-step records go to *records. A failed Create is a test failure
// and returns an empty summary.
inline SolveSummary SolveWith(const Circuit& c, SolverMethod method, Solution* s,
                              bool trace = false,
                              std::vector<NewtonStepRecord>* records = nullptr) {
  SolverOptions o;
  o.method = method;
  auto solver = BiasSolver::Create(c, o);
  EXPECT_TRUE(solver.ok());
  if (!solver.ok()) return {};
  (*solver)->set_trace(trace);
  SolveSummary summary = (*solver)->Solve(s);
  if (records != nullptr) *records = (*solver)->trace();
  return summary;
}

}  // namespace knee::testing
