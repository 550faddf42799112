#include "options.h"

#include <fmt/format.h>

#include <cmath>

#include "knee/design_steps.h"
#include "knee/diode_law.h"

namespace knee::cli {

std::vector<std::string> SplitTopLevel(const std::string& text, char separator) {
  return knee::SplitTopLevel(text, separator);
}

std::string FinishOptions(AnalysisOptions* options) {
  SolverOptions& solver = options->solver;
  solver.gmin_stepping = false;
  solver.source_stepping = false;
  if (options->aids != "none") {
    for (const std::string& aid : SplitTopLevel(options->aids, ',')) {
      if (aid == "gmin") {
        solver.gmin_stepping = true;
      } else if (aid == "source") {
        solver.source_stepping = true;
      } else {
        return fmt::format(
            "--aids: unknown aid '{}'; expected a comma list of gmin and source, "
            "or none",
            aid);
      }
    }
  }
  if (!(options->derate > 0 && options->derate <= 100)) {
    return fmt::format(
        "--derate: {} is outside (0, 100]; expected the percentage of each rating a "
        "diode may use, e.g. --derate 80",
        options->derate);
  }
  if (options->jobs < 0 || options->jobs > kMaxJobs) {
    return fmt::format(
        "--jobs: {} is outside 0..{}; expected the number of worker threads (0 = one per "
        "core, the default)",
        options->jobs, kMaxJobs);
  }
  if (options->temp && !(std::isfinite(*options->temp) && *options->temp > -kZeroCelsius)) {
    return fmt::format(
        "--temp: {} is not a temperature above absolute zero (-273.15 C); expected degrees "
        "Celsius, e.g. --temp 85",
        *options->temp);
  }
  if (std::optional<std::string> problem = Validate(solver)) return *problem;
  return "";
}

}  // namespace knee::cli
