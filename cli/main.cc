// knee's command line (cli.md). CLI11 reads the words; everything else is in commands.
// Exceptions from CLI11 end here, at the edge, as exit status 2 (0 for --help).
#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <csignal>
#include <map>
#include <string>

#include "commands.h"
#include "fit_command.h"
#include "options.h"
#include "output.h"
#include "sensitivity.h"
#include "version.h"

namespace {

using knee::cli::AnalysisOptions;
using knee::cli::ReportFormat;

// The options of every command, knee check included: what the file means and where the
// report goes.
void AddInputOptions(CLI::App* command, AnalysisOptions* o) {
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
  command->add_option("--out", o->out_path, "Write the report to PATH (whole or not at all)")
      ->type_name("PATH");
  command->add_flag("--quiet", o->quiet,
                    "No progress display and no notes on standard error (warnings stay)");
  command->add_flag("--no-warn", o->no_warn, "No warnings about the netlist on standard error");
}

// The options of the commands that solve: report format, charts, sweeps, ratings, solver.
void AddShared(CLI::App* command, AnalysisOptions* o, std::string* format) {
  command->add_option("--format", *format, "Report format")
      ->check(CLI::IsMember({"table", "csv", "json"}))
      ->type_name("table|csv|json");
  command->add_option("--plot", o->plot_path, "Also draw an SVG chart")->type_name("PATH.svg");
  command->add_flag("--plot-log-current", o->plot_log_current,
                    "Draw currents on a logarithmic axis of |I| in charts");
  command
      ->add_option("--jobs", o->jobs,
                   "Worker threads for sweeps, 1 to 256; 0 or not given: one per core")
      ->type_name("N");
  command->add_option("--shard", o->shard, "Compute only the K-th of N slices of a sweep")
      ->type_name("K/N");
  command
      ->add_option("--derate", o->derate,
                   "Share of each diode rating that may be used, in % (default 100)")
      ->type_name("PERCENT");
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
  solver->add_flag("--isothermal", o->solver.isothermal,
                   "Ignore self-heating: every junction at its own temp= or the ambient "
                   "(docs/thermal.md)");
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
      ->transform(CLI::CheckedTransformer(methods).description(""))
      ->type_name("auto|potential|classic");
}

// CLI11's message, starting in lower case like every other message of knee.
std::string UsageMessage(std::string text) {
  if (text.size() > 1 && text[0] >= 'A' && text[0] <= 'Z' && !(text[1] >= 'A' && text[1] <= 'Z')) {
    text[0] = static_cast<char>(text[0] - 'A' + 'a');
  }
  return text;
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
      {"spread",
       "The file's analysis over the spread of its vary lines: Monte Carlo or corners, with "
       "yields",
       knee::cli::RunSpread},
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
    if (std::string(c.name) == "spread") {
      c.app->add_option("TARGET=RANGE", options.sweeps,
                        "Spread a sweep over these axes instead of the file's analysis");
      c.app->add_option("--samples", options.spread_samples, "Monte Carlo samples (default 1000)")
          ->type_name("N");
      c.app->add_option("--seed", options.spread_seed, "Seed of the draws (default 1)")
          ->type_name("S");
      c.app->add_flag("--corners", options.spread_corners,
                      "Every combination of the vary limits instead of sampling");
      c.app
          ->add_option("--yield", options.spread_yield,
                       "Pass when the 95 % lower confidence bound of each yield reaches P "
                       "(default: every sample must pass)")
          ->type_name("P");
    }
    const std::string name = c.name;
    AddInputOptions(c.app, &options);
    if (name == "check") {
      c.app->add_flag("--parts", options.parts,
                      "Also print every key of every part as resolved, defaults marked");
    } else {
      AddShared(c.app, &options, &format);
    }
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

  // knee fit DATA.csv (cli.md, "knee fit"): its own options, no netlist.
  knee::cli::FitCommandOptions fit_options;
  std::string fit_format = "table";
  CLI::App* fit = app.add_subcommand(
      "fit", "Diode part parameters from measured or datasheet points (docs/fit.md)");
  fit->add_option("DATA", file,
                  "Points: CSV with columns v, i [, temp, weight], or - for "
                  "standard input")
      ->required();
  fit->add_option("--name", fit_options.name, "The part's name (default: the file's stem)")
      ->type_name("NAME");
  fit->add_option("--fit", fit_options.fit, "The keys to fit (default: those the points determine)")
      ->type_name("KEY,...");
  fit->add_option("--set", fit_options.sets, "Hold a part key at a value; repeatable")
      ->type_name("KEY=VALUE")
      ->allow_extra_args(false);
  fit->add_option("--format", fit_format, "Report format")
      ->check(CLI::IsMember({"table", "csv", "json"}))
      ->type_name("table|csv|json");
  fit->add_option("--out", fit_options.out_path, "Write the report to PATH")->type_name("PATH");
  fit->add_option("--plot", fit_options.plot_path, "Also draw the points, curve and errors")
      ->type_name("PATH.svg");
  fit->add_flag("--quiet", fit_options.quiet, "No notes on standard error");

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    // --help and --version print through CLI11; every usage error takes the one prefix of
    // command-line errors (docs/errors.md) with CLI11's own wording after it.
    if (e.get_exit_code() == static_cast<int>(CLI::ExitCodes::Success)) return app.exit(e);
    fmt::print(stderr,
               "knee: error: {}\nhint: knee --help lists the commands; knee COMMAND "
               "--help lists a command's options\n",
               UsageMessage(e.what()));
    return 2;
  }
  if (fit->parsed()) {
    fit_options.format = ParseFormat(fit_format);
    return knee::cli::RunFit(file, fit_options);
  }
  options.format = ParseFormat(format);
  for (const Command& c : commands) {
    if (c.app->parsed()) return c.run(file, options);
  }
  return 2;
}
