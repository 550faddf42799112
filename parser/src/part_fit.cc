#include "part_fit.h"

#include <fmt/format.h>

#include <cerrno>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <map>
#include <mutex>
#include <sstream>

#include "knee/fit.h"
#include "knee/fit_data.h"

namespace knee {
namespace {

constexpr std::uintmax_t kMaxDataBytes = std::uintmax_t{64} << 20;

Diagnostic At(const SourceLocation& where, std::string message, std::string hint = "") {
  Diagnostic d;
  d.where = where;
  d.message = std::move(message);
  d.hint = std::move(hint);
  return d;
}

// The fit's outcome for one data text and one set of held values. A sweep over a param
// reads the netlist once per point; the fit is the same each time.
struct Outcome {
  DiodeModel model;
  std::vector<Diagnostic> errors;
};

std::mutex cache_mutex;
std::map<std::string, Outcome>& Cache() {
  static std::map<std::string, Outcome> cache;
  return cache;
}

std::string CacheKey(const std::string& path, const std::string& text, const FitOptions& o) {
  std::string key = path + '\n' + text + '\n';
  for (int k = 0; k < kFitKeyCount; ++k) {
    key +=
        fmt::format("{}:{}:{};", k, o.held[k] ? 1 : 0, GetFitKey(o.model, static_cast<FitKey>(k)));
  }
  key += fmt::format("{};{};{}", o.model.ref_temp, o.model.breakdown_v.has_value(),
                     o.model.breakdown_v.value_or(0));
  return key;
}

Outcome Fit(const std::string& shown, const std::string& text, const FitOptions& options,
            const SourceLocation& fit_where, const std::string& part_name) {
  Outcome out;
  out.model = options.model;
  Result<FitData> data = ReadFitData(text, shown);
  std::vector<Diagnostic> problems;
  Result<FitResult> fitted = data ? FitDiode(*data, options) : Result<FitResult>(data.errors());
  if (!fitted) {
    const Diagnostic& first = fitted.errors().front();
    Diagnostic d = At(fit_where,
                      fmt::format("part '{}': the points of \"{}\" give no part: {}", part_name,
                                  shown, first.message),
                      first.hint);
    for (const Diagnostic& e : fitted.errors()) {
      d.notes.push_back({e.where, e.message});
      for (const auto& note : e.notes) d.notes.push_back(note);
    }
    out.errors.push_back(std::move(d));
    return out;
  }
  if (!fitted->converged) {
    out.errors.push_back(At(fit_where,
                            fmt::format("part '{}': the fit to \"{}\" does not converge ({})",
                                        part_name, shown, fitted->termination),
                            "run knee fit on the file to see the points and the keys"));
    return out;
  }
  out.model = fitted->model;
  for (const FittedKey& k : fitted->keys) {
    SetFitKey(&out.model, k.key, ReadFitLiteral(FitValueLiteral(k.key, k.value)));
  }
  return out;
}

}  // namespace

std::vector<Diagnostic> FitPartKeys(const std::string& netlist_file, const std::string& data_file,
                                    const SourceLocation& fit_where, const std::string& part_name,
                                    const std::vector<std::string>& written, DiodeModel* model) {
  namespace fs = std::filesystem;
  fs::path path(data_file);
  if (path.is_relative() && netlist_file != "<stdin>") {
    path = fs::path(netlist_file).parent_path() / path;
  }
  const std::string shown = path.lexically_normal().string();
  std::error_code ec;
  if (fs::is_directory(path, ec)) {
    return {At(fit_where, fmt::format("part '{}': cannot read \"{}\": it is a folder, not a data "
                                      "file",
                                      part_name, shown))};
  }
  // Only a regular file of bounded size: a device or a pipe named here could block the read
  // or never end it.
  if (fs::exists(path, ec) && !fs::is_regular_file(path, ec)) {
    return {At(fit_where, fmt::format("part '{}': cannot read \"{}\": it is not a regular file",
                                      part_name, shown))};
  }
  if (fs::exists(path, ec) && fs::file_size(path, ec) > kMaxDataBytes) {
    return {At(fit_where, fmt::format("part '{}': \"{}\" is larger than {} bytes; a data file "
                                      "holds points, not a recording",
                                      part_name, shown, kMaxDataBytes))};
  }
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    return {
        At(fit_where,
           fmt::format("part '{}': cannot read \"{}\": {}", part_name, shown, std::strerror(errno)),
           "fit= takes a path relative to the netlist's own folder")};
  }
  std::ostringstream text;
  text << in.rdbuf();
  FitOptions options;
  options.model = *model;
  for (const std::string& key : written) {
    if (std::optional<FitKey> fk = FindFitKey(key)) options.held[static_cast<int>(*fk)] = true;
  }
  const std::string key = CacheKey(shown, text.str(), options);
  {
    std::lock_guard<std::mutex> lock(cache_mutex);
    auto it = Cache().find(key);
    if (it != Cache().end()) {
      if (it->second.errors.empty()) *model = it->second.model;
      return it->second.errors;
    }
  }
  Outcome out = Fit(shown, text.str(), options, fit_where, part_name);
  std::lock_guard<std::mutex> lock(cache_mutex);
  Outcome& kept = Cache().emplace(key, std::move(out)).first->second;
  if (kept.errors.empty()) *model = kept.model;
  return kept.errors;
}

}  // namespace knee
