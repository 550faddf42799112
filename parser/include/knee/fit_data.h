// The points file of `knee fit` and of `part ... fit="FILE"` (docs/fit.md, "The data
// file"), and the fit's settings from the command line or a part statement.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "knee/fit.h"
#include "knee/result.h"

namespace knee {

// A header row naming the columns (v, i required; temp, weight optional; a unit in
// brackets scales the column: "i [mA]"), then one row per point. Cells take the netlist's
// number syntax. Blank lines and lines starting with '#' are skipped. Every problem found
// is reported at its line and column in `file_name`.
Result<FitData> ReadFitData(std::string_view text, const std::string& file_name);

// `--fit KEY,...` and `--set KEY=VALUE` of knee fit: every KEY a part key (netlist-format.md),
// fitted keys among those a fit can determine, values as in a part statement. Errors are
// located at the option (`where.file` names it).
Result<FitOptions> MakeFitOptions(const std::string& fit_keys,
                                  const std::vector<std::string>& sets);

// The part line printed after a fit: every fitted and every held key, the breakdown keys
// when the part has breakdown, the temperature keys when the points span temperatures, and
// the keys no fit touches (ratings, ref_temp) as written in `sets` (KEY=VALUE). In
// part-key table order.
std::string FitPartLine(const std::string& name, const FitResult& result, const FitOptions& options,
                        bool several_temperatures, const std::vector<std::string>& sets);

// Reads a literal of FitValueLiteral back as the netlist does.
double ReadFitLiteral(const std::string& literal);

}  // namespace knee
