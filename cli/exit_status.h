// The exit status of the CLI contract (cli.md, "Exit status"), derived from what
// happened; never cast from a solver status.
#pragma once

namespace knee::cli {

enum class ExitStatus : int {
  kSuccess = 0,
  kNoSolution = 1,    // the analysis ran but found no solution at some point
  kBadInput = 2,      // usage error, unreadable file, netlist error, unsolvable as drawn
  kStressFailed = 3,  // a diode beyond its ratings
  kExpectMissed = 4,  // an expect statement missed
};

// What an analysis found; Status() picks the lowest non-zero code that applies.
struct Outcome {
  bool bad_input = false;
  bool point_failed = false;
  bool stress_failed = false;
  bool expect_missed = false;

  void Merge(const Outcome& other) {
    bad_input |= other.bad_input;
    point_failed |= other.point_failed;
    stress_failed |= other.stress_failed;
    expect_missed |= other.expect_missed;
  }
  ExitStatus Status() const {
    if (point_failed) return ExitStatus::kNoSolution;
    if (bad_input) return ExitStatus::kBadInput;
    if (stress_failed) return ExitStatus::kStressFailed;
    if (expect_missed) return ExitStatus::kExpectMissed;
    return ExitStatus::kSuccess;
  }
};

}  // namespace knee::cli
