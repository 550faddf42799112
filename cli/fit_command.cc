#include "fit_command.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <set>

#include "eng_format.h"
#include "exit_status.h"
#include "knee/fit_data.h"
#include "output.h"
#include "pipeline.h"

namespace knee::cli {
namespace {

bool IsNameText(const std::string& s) {
  if (s.empty() || !(std::isalpha(static_cast<unsigned char>(s[0])) || s[0] == '_')) return false;
  return std::all_of(s.begin(), s.end(), [](char c) {
    return std::isalnum(static_cast<unsigned char>(c)) || c == '_';
  });
}

int Fail(const std::string& message) {
  fmt::print(stderr, "knee: error: {}\n", message);
  return static_cast<int>(ExitStatus::kBadInput);
}

double CurrentError(const FittedPoint& p) { return (p.i_model / p.measured.i - 1) * 100; }

// Units as the table shows them: the key's, or none.
std::string Eng(double v, const char* unit, int digits) {
  const std::string_view u = unit;
  if (u == "1/K") return fmt::format("{:.{}g} 1/K", v, digits);
  if (u == "eV") return fmt::format("{:.{}g} eV", v, digits);
  if (u.empty()) return fmt::format("{:.{}g}", v, digits);
  return FormatEng(v, u, digits);
}

std::string Pad(const std::string& s, std::size_t width) {
  // Width in characters (the units carry non-ASCII signs such as Ω and µ).
  std::size_t chars = 0;
  for (unsigned char c : s) chars += (c & 0xC0) != 0x80;
  return s + std::string(width > chars ? width - chars : 0, ' ');
}

std::string Table(const std::vector<std::vector<std::string>>& rows) {
  std::vector<std::size_t> width;
  for (const auto& row : rows) {
    width.resize(std::max(width.size(), row.size()));
    for (std::size_t c = 0; c < row.size(); ++c) {
      std::size_t chars = 0;
      for (unsigned char ch : row[c]) chars += (ch & 0xC0) != 0x80;
      width[c] = std::max(width[c], chars);
    }
  }
  std::string out;
  for (const auto& row : rows) {
    std::string line;
    for (std::size_t c = 0; c < row.size(); ++c) {
      line += c + 1 == row.size() ? row[c] : Pad(row[c], width[c] + 2);
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  return out;
}

std::string TemperatureList(const std::vector<double>& temps) {
  std::string text;
  for (std::size_t k = 0; k < temps.size(); ++k) {
    text += (k ? ", " : "") + fmt::format("{:g}", temps[k]);
  }
  return text + " °C";
}

}  // namespace

std::string PartNameFromFile(const std::string& file) {
  std::string stem = file == "-" ? "fitted" : std::filesystem::path(file).stem().string();
  for (char& c : stem) {
    if (!(std::isalnum(static_cast<unsigned char>(c)) || c == '_')) c = '_';
  }
  if (stem.empty() || std::isdigit(static_cast<unsigned char>(stem[0]))) stem = "d_" + stem;
  return stem;
}

std::string WriteFitTable(const FitReport& r) {
  const FitResult& f = r.result;
  std::string out = r.part_line + "\n\n";
  out += fmt::format("fit of {}: {} points at {}, {} key{} fitted", r.file, f.points.size(),
                     TemperatureList(r.temperatures), f.keys.size(), f.keys.size() == 1 ? "" : "s");
  if (f.exact) {
    out += f.uncertainty_from_digits
               ? "; exactly determined (as many points as keys): the part passes through every "
                 "point, and the uncertainty shown is that of the voltages' written digits alone\n"
               : "; exactly determined (as many points as keys): the part passes through every "
                 "point and the data leave no degree of freedom for an uncertainty\n";
  } else {
    out += fmt::format(", {} degrees of freedom; rms of ln(I_model/I) {:.3g} ({:.3g} %)\n",
                       f.degrees_of_freedom, f.residual_rms, 100 * f.residual_rms);
  }
  out += "\n";
  std::vector<std::vector<std::string>> keys = {{"key", "value", "std error", "95 % interval"}};
  for (std::size_t k = 0; k < f.keys.size(); ++k) {
    const FittedKey& key = f.keys[k];
    const char* unit = FitKeyUnit(key.key);
    keys.push_back({FitKeyName(key.key), Eng(r.line_values[k], unit, 6),
                    key.std_error ? Eng(*key.std_error, unit, 2) : "exact",
                    key.low ? Eng(*key.low, unit, 4) + " .. " + Eng(*key.high, unit, 4) : "—"});
  }
  out += Table(keys);
  for (const UndeterminedKey& u : f.undetermined) {
    out += fmt::format("not determined by these points: {} (held at {}): {}\n", FitKeyName(u.key),
                       Eng(u.value, FitKeyUnit(u.key), 6), u.why);
  }
  out += "\n";
  std::vector<std::vector<std::string>> points = {
      {"line", "temp", "v", "i", "v model", "error V", "i model", "error %"}};
  for (const FittedPoint& p : f.points) {
    const double dv = p.v_model - p.measured.v;
    points.push_back({fmt::format("{}", p.measured.i_where.line),
                      FormatEng(p.measured.temp, "°C", 4), FormatEng(p.measured.v, "V", 5),
                      FormatEng(p.measured.i, "A", 5), FormatEng(p.v_model, "V", 6),
                      FormatEng(dv, "V", 3), FormatEng(p.i_model, "A", 5),
                      fmt::format("{:+.3f} %", CurrentError(p))});
  }
  out += Table(points);
  out += fmt::format("\nLevenberg–Marquardt (Ceres Solver): {} iterations; {}\n", f.iterations,
                     f.termination);
  return out;
}

std::string WriteFitJson(const FitReport& r) {
  const FitResult& f = r.result;
  nlohmann::ordered_json j;
  j["format"] = "knee-fit/1";
  j["file"] = r.file;
  j["part"] = r.part_line;
  j["exact"] = f.exact;
  j["degrees_of_freedom"] = f.degrees_of_freedom;
  j["uncertainty_from"] = !f.exact                    ? "scatter"
                          : f.uncertainty_from_digits ? "written_digits"
                                                      : "none";
  j["residual_rms"] = f.residual_rms;
  j["temperatures"] = r.temperatures;
  j["keys"] = nlohmann::ordered_json::object();
  for (std::size_t k = 0; k < f.keys.size(); ++k) {
    const FittedKey& key = f.keys[k];
    nlohmann::ordered_json e;
    e["value"] = r.line_values[k];
    e["unit"] = FitKeyUnit(key.key);
    e["std_error"] = key.std_error ? nlohmann::ordered_json(*key.std_error) : nullptr;
    e["low"] = key.low ? nlohmann::ordered_json(*key.low) : nullptr;
    e["high"] = key.high ? nlohmann::ordered_json(*key.high) : nullptr;
    j["keys"][FitKeyName(key.key)] = e;
  }
  j["undetermined"] = nlohmann::ordered_json::object();
  for (const UndeterminedKey& u : f.undetermined) {
    j["undetermined"][FitKeyName(u.key)] = {{"held_at", u.value}, {"why", u.why}};
  }
  j["points"] = nlohmann::ordered_json::array();
  for (const FittedPoint& p : f.points) {
    auto num = [](double v) { return std::isfinite(v) ? nlohmann::ordered_json(v) : nullptr; };
    j["points"].push_back({{"line", p.measured.i_where.line},
                           {"v", p.measured.v},
                           {"i", p.measured.i},
                           {"temp", p.measured.temp},
                           {"weight", p.measured.weight},
                           {"v_model", num(p.v_model)},
                           {"i_model", num(p.i_model)},
                           {"v_error", num(p.v_model - p.measured.v)},
                           {"i_error_percent", num(CurrentError(p))}});
  }
  j["solver"] = {{"method", "Levenberg-Marquardt (Ceres Solver)"},
                 {"iterations", f.iterations},
                 {"termination", f.termination}};
  return j.dump(2) + "\n";
}

std::string WriteFitCsv(const FitReport& r) {
  std::string out =
      "line,temp [C],v [V],i [A],weight,v_model [V],i_model [A],v_error [V],i_error [%]\n";
  for (const FittedPoint& p : r.result.points) {
    out += fmt::format("{},{},{},{},{},{},{},{},{}\n", p.measured.i_where.line,
                       FormatRoundTrip(p.measured.temp), FormatRoundTrip(p.measured.v),
                       FormatRoundTrip(p.measured.i), FormatRoundTrip(p.measured.weight),
                       FormatRoundTrip(p.v_model), FormatRoundTrip(p.i_model),
                       FormatRoundTrip(p.v_model - p.measured.v), FormatRoundTrip(CurrentError(p)));
  }
  return out;
}

int RunFit(const std::string& file, const FitCommandOptions& options) {
  if (!options.name.empty() && !IsNameText(options.name)) {
    return Fail(fmt::format("--name: '{}' is not a part name; names match [A-Za-z_][A-Za-z0-9_]*",
                            options.name));
  }
  for (const auto& [path, option] :
       {std::pair{options.out_path, "--out"}, std::pair{options.plot_path, "--plot"}}) {
    if (path.empty()) continue;
    if (std::string problem = CheckWritable(path); !problem.empty()) {
      return Fail(fmt::format("{}: {}", option, problem));
    }
  }
  Result<FitOptions> fit_options = MakeFitOptions(options.fit, options.sets);
  if (!fit_options) {
    PrintDiagnostics(fit_options.errors(), "");
    return static_cast<int>(ExitStatus::kBadInput);
  }
  std::string problem;
  std::optional<std::string> text = ReadSource(file, &problem);
  if (!text) return Fail(problem);
  const std::string shown = file == "-" ? "<stdin>" : file;
  Result<FitData> data = ReadFitData(*text, shown);
  if (!data) {
    PrintDiagnostics(data.errors(), *text);
    return static_cast<int>(ExitStatus::kBadInput);
  }
  Result<FitResult> fitted = FitDiode(*data, *fit_options);
  if (!fitted) {
    PrintDiagnostics(fitted.errors(), *text);
    return static_cast<int>(ExitStatus::kBadInput);
  }
  if (!fitted->converged) {
    fmt::print(stderr, "knee: error: {}: the fit does not converge after {} iterations: {}\n",
               shown, fitted->iterations, fitted->termination);
    return static_cast<int>(ExitStatus::kNoSolution);
  }
  FitReport report;
  report.file = shown;
  std::set<double> temps;
  for (const FittedPoint& p : fitted->points) temps.insert(p.measured.temp);
  report.temperatures.assign(temps.begin(), temps.end());
  const std::string name = options.name.empty() ? PartNameFromFile(file) : options.name;
  report.part_line = FitPartLine(name, *fitted, *fit_options, temps.size() > 1, options.sets);
  for (const FittedKey& k : fitted->keys) {
    report.line_values.push_back(ReadFitLiteral(FitValueLiteral(k.key, k.value)));
  }
  report.result = std::move(fitted).value();
  if (!options.plot_path.empty()) {
    if (std::string p = WriteFileAtomically(options.plot_path, DrawFitChart(report)); !p.empty()) {
      return Fail("--plot: " + p);
    }
  }
  const std::string content = options.format == ReportFormat::kJson  ? WriteFitJson(report)
                              : options.format == ReportFormat::kCsv ? WriteFitCsv(report)
                                                                     : WriteFitTable(report);
  problem = options.out_path.empty() ? WriteStdout(content)
                                     : WriteFileAtomically(options.out_path, content);
  if (!problem.empty()) return Fail(problem);
  if (!options.quiet && options.format != ReportFormat::kTable) {  // the table says it itself
    for (const UndeterminedKey& u : report.result.undetermined) {
      fmt::print(stderr, "knee: note: {}: {} is not determined by these points and is held at {}\n",
                 shown, FitKeyName(u.key), Eng(u.value, FitKeyUnit(u.key), 6));
    }
  }
  return static_cast<int>(ExitStatus::kSuccess);
}

}  // namespace knee::cli
