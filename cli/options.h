// The options shared by the analyses (cli.md, "Options shared by the analyses"), as
// parsed from the command line, and their validation.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "knee/solver.h"
#include "report.h"

namespace knee::cli {

// Most worker threads --jobs may ask for: each holds a copy of the circuit and a solver.
inline constexpr int kMaxJobs = 256;

struct AnalysisOptions {
  std::vector<std::string> sets;               // --set NAME=VALUE, in order
  std::optional<double> temp;                  // --temp C
  std::string show;                            // --show Q1,Q2,... (top-level commas separate)
  ReportFormat format = ReportFormat::kTable;  // --format
  std::string out_path;                        // --out PATH ("" = standard output)
  std::string plot_path;                       // --plot PATH.svg ("" = no chart)
  bool plot_log_current = false;               // --plot-log-current: currents on a log axis of |I|
  int jobs = 0;                                // --jobs N (0 = one per core, <= kMaxJobs)
  std::string shard;                           // --shard K/N ("" = whole sweep)
  double derate = 100;                         // --derate PERCENT: usable share of each rating
  bool quiet = false;                          // --quiet
  bool no_warn = false;                        // --no-warn: no netlist warnings on stderr
  bool parts = false;                          // knee check --parts: every key of every part
  bool trace = false;                          // --trace: Newton step records on standard error
  std::vector<std::string> sweeps;             // knee sweep: TARGET=RANGE, first = inner loop
  std::vector<std::string> expects;            // --expect QUANTITY=VALUE[~TOL] (bias, hand, run)
  std::string sensitivity_of;     // knee sensitivity --of Q1,Q2,... ("" = the file's show list)
  std::string sweep_sensitivity;  // knee sweep --sensitivity Q ("" = none)
  // knee hand (docs/hand-models.md): number texts in the netlist's forms ("" = default).
  std::string hand_drop;             // --drop V: on-voltage of the drop models (default 0.7 V)
  std::string hand_on_res;           // --on-res Ohm: on-resistance of the piecewise-linear model
  std::string hand_fit_at;           // --fit-at A: piecewise-linear model tangent at this current
  SolverOptions solver;              // --voltage-tol, --current-tol, --rel-tol, ...
  std::string aids = "gmin,source";  // --aids: comma list of gmin, source; or none

  // knee spread (docs/spread.md).
  long long spread_samples = 1000;     // --samples N
  unsigned long long spread_seed = 1;  // --seed S
  bool spread_corners = false;         // --corners
  std::string spread_yield;            // --yield P ("" = every sample must pass)
};

// Splits "a,b,(max(c.v,d.v))" at commas outside parentheses.
std::vector<std::string> SplitTopLevel(const std::string& text, char separator);

// Applies --aids to options.solver and checks every field; "" when all is well.
std::string FinishOptions(AnalysisOptions* options);

}  // namespace knee::cli
