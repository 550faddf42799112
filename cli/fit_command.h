// `knee fit DATA.csv` (cli.md, "knee fit"; docs/fit.md): the command, its reports and chart.
#pragma once

#include <string>
#include <vector>

#include "knee/fit.h"
#include "report.h"

namespace knee::cli {

struct FitCommandOptions {
  std::string name;               // --name: the part's name ("" = the file's stem)
  std::string fit;                // --fit KEY,... ("" = the keys the data determine)
  std::vector<std::string> sets;  // --set KEY=VALUE, held
  ReportFormat format = ReportFormat::kTable;
  std::string out_path;   // --out
  std::string plot_path;  // --plot
  bool quiet = false;
};

int RunFit(const std::string& file, const FitCommandOptions& options);

// What the reports show: the fit, its part line and where the points came from.
struct FitReport {
  std::string file;       // as shown in messages
  std::string part_line;  // the ready `part` statement
  FitResult result;
  std::vector<double> temperatures;  // distinct, ascending
  // The value each fitted key has in the part line (kFitDigits), in result.keys' order.
  std::vector<double> line_values;
};

std::string WriteFitTable(const FitReport& report);
std::string WriteFitJson(const FitReport& report);
std::string WriteFitCsv(const FitReport& report);
std::string DrawFitChart(const FitReport& report);  // cli/fit_chart.cc

// The file's stem made a valid part name ("rect-1a iv.csv" -> "rect_1a_iv").
std::string PartNameFromFile(const std::string& file);

}  // namespace knee::cli
