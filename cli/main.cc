// knee's command line (cli.md). CLI11 reads the words; everything else is in commands.
// Exceptions from CLI11 end here, at the edge, as exit status 2 (0 for --help).
#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <csignal>
#include <map>
#include <string>

#include "commands.h"
#include "options.h"
#include "output.h"
#include "sensitivity.h"
#include "version.h"

namespace {

using knee::cli::AnalysisOptions;
using knee::cli::ReportFormat;

void AddShared(CLI::App* command, AnalysisOptions* o, std::string* format) {
  command
      ->add_option("--set", o->sets,
                   "Override a param, an element value or a part parameter (PART.key): "
                   "NAME=VALUE; repeatable")
      ->type_name("NAME=VALUE")
      ->allow_extra_args(false);
  command->add_option("--temp", o->temp, "Circuit temperature in °C (overrides the file's temp)")
      ->type_name("C");
  command->add_option("--show", o->show, "Quantities to report, comma separated")
      ->type_name("Q1,Q2,...");
  command->add_option("--format", *format, "Report format")
      ->check(CLI::IsMember({"table", "csv", "json"}))
      ->type_name("table|csv|json");
  command->add_option("--out", o->out_path, "Write the report to PATH (whole or not at all)")
      ->type_name("PATH");
  command->add_option("--plot", o->plot_path, "Also draw an SVG chart")->type_name("PATH.svg");
  command->add_flag("--plot-log-current", o->plot_log_current,
                    "Draw currents on a logarithmic axis of |I| in charts");
  command->add_option("--jobs", o->jobs, "Worker threads for sweeps (default: all cores)")
      ->type_name("N");
  command->add_option("--shard", o->shard, "Compute only the K-th of N slices of a sweep")
      ->type_name("K/N");
  command
      ->add_option("--derate", o->derate,
                   "Share of each diode rating that may be used, in % (default 100)")
      ->type_name("PERCENT");
  command->add_flag("--quiet", o->quiet, "No progress display and no notes on standard error");
  command->add_flag("--trace", o->trace, "Print every Newton step on standard error");
  auto* solver = command->add_option_group("Solver settings (docs/solver.md)");
  solver->add_option("--voltage-tol", o->solver.abs_voltage_tol,
                     "Absolute tolerance of voltage updates in V (default 1e-6)");
  solver->add_option("--current-tol", o->solver.abs_current_tol,
                     "Absolute tolerance of KCL residuals and current updates in A "
                     "(default 1e-12)");
  solver->add_option("--rel-tol", o->solver.rel_tol, "Relative tolerance (default 1e-6)");
  solver->add_option("--max-steps", o->solver.max_newton_steps,
                     "Newton steps per attempt (default 200)");
  solver->add_flag("!--no-limiting", o->solver.junction_limiting,
                   "Turn off junction-voltage limiting");
  solver->add_option("--aids", o->aids,
                     "Convergence aids to try, in order: gmin,source (default) or none");
  const std::map<std::string, knee::SolverMethod> methods{
      {"auto", knee::SolverMethod::kAuto},
      {"potential", knee::SolverMethod::kPotential},
      {"classic", knee::SolverMethod::kClassic}};
  solver
      ->add_option("--method", o->solver.method,
                   "Bias solver: auto (default: the potential method when the network is "
                   "monotone, the classic ladder otherwise or if it fails), potential (line "
                   "search on the network's potential; monotone networks only) or classic "
                   "(junction limiting and the aid ladder)")
      ->transform(CLI::CheckedTransformer(methods))
      ->type_name("auto|potential|classic");
}

ReportFormat ParseFormat(const std::string& text) {
  if (text == "csv") return ReportFormat::kCsv;
  if (text == "json") return ReportFormat::kJson;
  return ReportFormat::kTable;
}

}  // namespace

int main(int argc, char** argv) {
  // A closed standard output pipe becomes a write error we report, not a silent death.
  std::signal(SIGPIPE, SIG_IGN);
  knee::cli::InstallInterruptHandler();

  CLI::App app{
      "knee: DC bias points and sweeps of diode networks, exact and verified.\n"
      "Netlist format: docs/netlist-format.md; commands: docs/cli.md"};
  app.set_version_flag("--version", std::string("knee ") + knee::cli::Version());
  app.require_subcommand(1);
  app.fallthrough(false);

  AnalysisOptions options;
  std::string format = "table";
  std::string file;

  struct Command {
    const char* name;
    const char* help;
    int (*run)(const std::string&, AnalysisOptions);
    CLI::App* app = nullptr;
  };
  Command commands[] = {
      {"check", "Parse and check the circuit, solve nothing", knee::cli::RunCheck},
      {"bias", "DC bias point", knee::cli::RunBias},
      {"sweep", "DC sweep: TARGET=RANGE..., the first TARGET is the inner loop",
       knee::cli::RunSweep},
      {"run", "Whatever the file requests (bias and/or sweeps)", knee::cli::RunRun},
      {"hand",
       "Bias point by the simplified diode models of hand calculation, beside the exact one",
       knee::cli::RunHand},
      {"sensitivity", "DC sensitivities of quantities to every value of the circuit",
       knee::cli::RunSensitivity},
  };
  for (Command& c : commands) {
    c.app = app.add_subcommand(c.name, c.help);
    c.app->add_option("FILE", file, "Netlist (.knee), or - for standard input")->required();
    if (std::string(c.name) == "sweep") {
      c.app
          ->add_option("TARGET=RANGE", options.sweeps,
                       "Sweep target and range, e.g. Vline=-30..30:0.1 temp=-40,25,85")
          ->required();
    }
    AddShared(c.app, &options, &format);
    const std::string name = c.name;
    if (name == "bias" || name == "hand" || name == "run") {
      c.app
          ->add_option("--expect", options.expects,
                       "Check a quantity against an expected value: QUANTITY=VALUE[~TOL], TOL "
                       "absolute (50m) or relative (5%), default 5 %; repeatable")
          ->type_name("Q=VALUE[~TOL]")
          ->allow_extra_args(false);
    }
    if (name == "sensitivity") {
      c.app
          ->add_option("--of", options.sensitivity_of,
                       "Quantities to differentiate, comma separated (default: the file's show "
                       "list)")
          ->type_name("Q1,Q2,...");
    }
    if (name == "sweep") {
      c.app
          ->add_option("--sensitivity", options.sweep_sensitivity,
                       "Add the sensitivity columns of quantity Q to every sweep point")
          ->type_name("Q");
    }
    if (name == "hand") {
      c.app
          ->add_option("--drop", options.hand_drop,
                       "On-voltage of the drop models in V (default 0.7)")
          ->type_name("V");
      c.app
          ->add_option("--on-res", options.hand_on_res,
                       "On-resistance of the piecewise-linear model in ohms (default: each "
                       "part's series_res)")
          ->type_name("OHMS");
      c.app
          ->add_option("--fit-at", options.hand_fit_at,
                       "Piecewise-linear model: the tangent to each part's exact curve at this "
                       "current in A")
          ->type_name("CURRENT");
    }
  }

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? 0 : 2;
  }
  options.format = ParseFormat(format);
  for (const Command& c : commands) {
    if (c.app->parsed()) return c.run(file, options);
  }
  return 2;
}
