// `part NAME diode fit="FILE" ...` (netlist-format.md, "Parts from data: fit="): the fit of
// `knee fit` when the netlist is read.
#pragma once

#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/result.h"

namespace knee {

// Fits the keys of `model` that the points of `data_file` (relative to the folder of
// `netlist_file`) determine; the keys named in `written` keep their values. Fitted values
// are the texts of the printed part line read back, so that pasting that line gives the same
// part. Problems are errors at `fit_where`, with the data file's places as notes.
std::vector<Diagnostic> FitPartKeys(const std::string& netlist_file, const std::string& data_file,
                                    const SourceLocation& fit_where, const std::string& part_name,
                                    const std::vector<std::string>& written, DiodeModel* model);

}  // namespace knee
