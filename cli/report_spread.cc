// The reports of knee spread: a table for people, one CSV row per sample, JSON
// (docs/json-schema.md, "knee-spread/1") and the histograms.
#include "report_spread.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

#include "eng_format.h"
#include "report_common.h"
#include "svg_chart.h"

namespace knee::cli {
namespace {

const char* FormName(const VaryLine& v) {
  switch (v.form) {
    case VaryLine::Form::kTolerance:
      return "tolerance";
    case VaryLine::Form::kRange:
      return "range";
    case VaryLine::Form::kFactor:
      return "factor";
  }
  return "";
}

std::string Percent(double fraction) {
  if (std::isnan(fraction)) return "—";
  return fmt::format("{:.4g} %", 100 * fraction);
}

std::string Header(const SpreadReport& r) {
  const std::string file = r.file == "-" ? "<stdin>" : r.file;
  const std::string name = r.title.empty() ? file : "\"" + r.title + "\"";
  const long long count = static_cast<long long>(r.rows.size());
  std::string what = r.corners ? fmt::format("{} corners", count)
                               : fmt::format("{} Monte Carlo samples (seed {})", count, r.seed);
  if (count != r.total) {
    what += fmt::format(", numbers {}..{} of {}", r.first, r.first + count - 1, r.total);
  }
  return fmt::format("{}: spread of the {} at {}, {}\n", name, r.of, FormatEng(r.temp, "°C", 4),
                     what);
}

std::string DrawText(const SpreadReport& r, std::span<const double> row) {
  std::string out;
  for (size_t j = 0; j < r.columns.size(); ++j) {
    if (j) out += ", ";
    out += fmt::format("{} = {}", r.columns[j].name, FormatEng(row[j], r.columns[j].unit, 6));
  }
  return out;
}

}  // namespace

std::string WriteSpreadTable(const SpreadReport& r) {
  std::string out = Header(r) + "\n";
  out += "  varied:\n";
  for (const VaryLine& v : r.varies) {
    std::string unit;
    for (const DrawColumn& c : r.columns) {
      if (&r.varies[static_cast<size_t>(c.vary)] == &v) unit = c.unit;
    }
    out += fmt::format("    {} {} {}{}: {} .. {} (nominal {})\n", v.target.name, v.spread_text,
                       v.distribution == VaryLine::Distribution::kNormal ? "normal" : "uniform",
                       v.each ? " each" : "", FormatEng(v.low, unit, 6), FormatEng(v.high, unit, 6),
                       FormatEng(v.nominal, unit, 6));
  }
  // The distribution table.
  const std::vector<std::string> heads = {"quantity", "nominal", "mean",     "std dev", "min",
                                          "0.135 %",  "50 %",    "99.865 %", "max"};
  std::vector<std::vector<std::string>> cells;
  for (const SpreadQuantity& q : r.quantities) {
    cells.push_back({q.name, FormatEng(q.nominal, q.unit, 6), FormatEng(q.mean, q.unit, 6),
                     FormatEng(q.std_dev, q.unit, 4), FormatEng(q.min, q.unit, 6),
                     FormatEng(q.q_low, q.unit, 6), FormatEng(q.q_median, q.unit, 6),
                     FormatEng(q.q_high, q.unit, 6), FormatEng(q.max, q.unit, 6)});
  }
  std::vector<size_t> width(heads.size());
  for (size_t c = 0; c < heads.size(); ++c) {
    width[c] = DisplayWidth(heads[c]);
    for (const auto& row : cells) width[c] = std::max(width[c], DisplayWidth(row[c]));
  }
  if (!cells.empty()) {
    out += "\n  ";
    for (size_t c = 0; c < heads.size(); ++c) {
      out += (c == 0 ? PadRight(heads[c], width[c]) : "  " + PadLeft(heads[c], width[c]));
    }
    out += "\n";
    for (const auto& row : cells) {
      out += "  ";
      for (size_t c = 0; c < row.size(); ++c) {
        out += (c == 0 ? PadRight(row[c], width[c]) : "  " + PadLeft(row[c], width[c]));
      }
      out += "\n";
    }
  }
  if (!r.checks.empty()) out += "\n";
  for (const SpreadCheck& c : r.checks) {
    out += fmt::format("  {} {} {}: {} of {} pass, yield {} (95 % interval {} .. {})\n",
                       c.pass ? "pass  " : "FAILED", c.rating ? "rating" : "expect", c.name,
                       c.passing, c.samples, Percent(c.yield), Percent(c.low), Percent(c.high));
    if (c.worst_row >= 0) {
      const auto& row = r.rows[static_cast<size_t>(c.worst_row)];
      out += fmt::format(
          "         worst: {} {}{}, margin {}; {}\n", r.corners ? "corner" : "sample",
          r.first + c.worst_row,
          !c.never.empty() ? ", " + c.never + " in any " + (r.corners ? "corner" : "sample")
          : std::isnan(c.worst_value) ? ""
                                      : ", value " + FormatEng(c.worst_value, c.unit, 6),
          FormatEng(c.worst_margin, c.unit, 4), DrawText(r, row));
    }
    if (!c.movers.empty()) {
      std::string movers;
      for (const auto& m : c.movers) {
        if (!movers.empty()) movers += ", ";
        movers += r.corners
                      ? fmt::format("{} ({:+.4g} {})", m.target, m.measure, DisplayUnit(c.unit))
                      : fmt::format("{} (rho {:+.3f})", m.target, m.measure);
      }
      out += fmt::format(
          "         moved most by {}: {}\n",
          r.corners ? "(main effect on the margin)" : "(rank correlation with the margin)", movers);
    }
  }
  if (r.yield_target) {
    out += fmt::format(
        "\n  --yield {}: a check passes when the lower end of its 95 % interval "
        "reaches it\n",
        Percent(*r.yield_target));
  }
  if (r.unsolved > 0) {
    out += fmt::format("\n  {} samples without a solution (counted as failing every check):\n",
                       r.unsolved);
    int shown = 0;
    for (size_t i = 0; i < r.failures.size() && shown < 10; ++i) {
      if (r.failures[i].empty()) continue;
      out +=
          fmt::format("    {} {}: {}; {}\n", r.corners ? "corner" : "sample",
                      r.first + static_cast<long long>(i), DrawText(r, r.rows[i]), r.failures[i]);
      ++shown;
    }
  }
  for (const std::string& c : r.cautions) out += "\n" + c + "\n";
  const SolverAccount& a = r.account;
  out += fmt::format(
      "\nsolver: {}{}, {} solved points, {} Newton steps (at most {} at one point), {}; largest "
      "KCL residual {:.2e} A{}\n",
      a.method, a.unique ? " (monotone network: every solution is unique)" : "", a.points,
      a.newton_steps, a.max_newton_steps,
      a.aids.empty() ? std::string("no aids") : fmt::format("aids: {}", fmt::join(a.aids, ", ")),
      a.max_kcl_residual, a.worst_node.empty() ? "" : " at " + a.worst_node);
  return out;
}

std::string WriteSpreadCsv(const SpreadReport& r, const SpreadTextSink& emit) {
  // Pieces of about this size go to `emit`: the text of a million samples is never held
  // whole (a write per piece costs nothing beside formatting it).
  constexpr size_t kPiece = size_t{1} << 16;
  fmt::memory_buffer out;
  out.reserve(2 * kPiece);
  if (r.csv_header) {
    std::vector<std::string> names = {r.corners ? "corner" : "sample"};
    for (const DrawColumn& c : r.columns) {
      names.push_back(c.unit.empty() ? c.name : fmt::format("{} [{}]", c.name, c.unit));
    }
    for (const SpreadQuantity& q : r.quantities) {
      names.push_back(q.unit.empty() ? q.name : fmt::format("{} [{}]", q.name, q.unit));
    }
    for (const SpreadCheck& c : r.checks) names.push_back(fmt::format("pass({})", c.name));
    for (size_t i = 0; i < names.size(); ++i) {
      if (i) out.push_back(',');
      const std::string field = CsvField(names[i]);
      out.append(std::string_view(field));
    }
    out.push_back('\n');
  }
  const size_t values = r.columns.size() + r.quantities.size();
  for (size_t i = 0; i < r.rows.size(); ++i) {
    const std::span<const double> row = r.rows[i];
    AppendInteger(r.first + static_cast<long long>(i), out);
    for (size_t c = 0; c < values; ++c) {
      out.push_back(',');
      AppendRoundTrip(row[c], out);
    }
    for (size_t c = values; c < row.size(); ++c) {
      out.push_back(',');
      out.push_back(row[c] >= 0 ? '1' : '0');
    }
    out.push_back('\n');
    if (out.size() >= kPiece) {
      if (std::string problem = emit(std::string_view(out.data(), out.size())); !problem.empty())
        return problem;
      out.clear();
    }
  }
  return emit(std::string_view(out.data(), out.size()));
}

std::string WriteSpreadCsv(const SpreadReport& r) {
  std::string text;
  WriteSpreadCsv(r, [&text](std::string_view piece) {
    text.append(piece);
    return std::string();
  });
  return text;
}

std::string WriteSpreadJson(const SpreadReport& r) {
  using Json = nlohmann::ordered_json;
  Json j;
  j["format"] = "knee-spread/1";
  j["title"] = r.title;
  j["file"] = r.file;
  j["analysis"] = "spread";
  j["of"] = r.of == "bias point" ? "bias" : "sweep";
  j["temperature"] = r.temp;
  j["method"] = r.corners ? "corners" : "monte_carlo";
  j["seed"] = r.seed;
  j["total"] = r.total;
  j["first"] = r.first;
  j["count"] = r.rows.size();
  j["yield_target"] = r.yield_target ? Json(*r.yield_target) : Json(nullptr);
  Json varies = Json::array();
  for (const VaryLine& v : r.varies) {
    varies.push_back(
        {{"target", v.target.name},
         {"spread", v.spread_text},
         {"form", FormName(v)},
         {"distribution", v.distribution == VaryLine::Distribution::kNormal ? "normal" : "uniform"},
         {"each", v.each},
         {"nominal", JsonNumber(v.nominal)},
         {"low", JsonNumber(v.low)},
         {"high", JsonNumber(v.high)},
         {"note", v.note},
         {"location", JsonLocation(v.where)}});
  }
  j["varies"] = varies;
  Json draws = Json::array();
  for (size_t c = 0; c < r.columns.size(); ++c) {
    draws.push_back({{"name", r.columns[c].name},
                     {"unit", r.columns[c].unit},
                     {"nominal", JsonNumber(r.nominal_draws[c])}});
  }
  j["draws"] = draws;
  Json quantities = Json::array();
  for (const SpreadQuantity& q : r.quantities) {
    quantities.push_back({{"name", q.name},
                          {"unit", q.unit},
                          {"nominal", JsonNumber(q.nominal)},
                          {"solved", q.solved},
                          {"mean", JsonNumber(q.mean)},
                          {"std_dev", JsonNumber(q.std_dev)},
                          {"min", JsonNumber(q.min)},
                          {"max", JsonNumber(q.max)},
                          {"q0_135", JsonNumber(q.q_low)},
                          {"q50", JsonNumber(q.q_median)},
                          {"q99_865", JsonNumber(q.q_high)}});
  }
  j["quantities"] = quantities;
  Json checks = Json::array();
  for (const SpreadCheck& c : r.checks) {
    Json movers = Json::array();
    for (const auto& m : c.movers) movers.push_back({{"target", m.target}, {"measure", m.measure}});
    Json worst = nullptr;
    if (c.worst_row >= 0) {
      Json draws_at = Json::object();
      const auto& row = r.rows[static_cast<size_t>(c.worst_row)];
      for (size_t d = 0; d < r.columns.size(); ++d)
        draws_at[r.columns[d].name] = JsonNumber(row[d]);
      worst = {{"sample", r.first + c.worst_row},
               {"value", JsonNumber(c.worst_value)},
               {"margin", JsonNumber(c.worst_margin)},
               {"never", c.never.empty() ? Json(nullptr) : Json(c.never)},
               {"draws", draws_at}};
    }
    checks.push_back({{"kind", c.rating ? "rating" : "expect"},
                      {"name", c.name},
                      {"unit", c.unit},
                      {"passing", c.passing},
                      {"samples", c.samples},
                      {"yield", JsonNumber(c.yield)},
                      {"interval", {JsonNumber(c.low), JsonNumber(c.high)}},
                      {"pass", c.pass},
                      {"worst", worst},
                      {"movers_by", r.corners ? "main_effect" : "spearman_rho"},
                      {"movers", movers}});
  }
  j["checks"] = checks;
  Json failures = Json::array();
  for (size_t i = 0; i < r.failures.size(); ++i) {
    if (r.failures[i].empty()) continue;
    Json draws_at = Json::object();
    for (size_t d = 0; d < r.columns.size(); ++d)
      draws_at[r.columns[d].name] = JsonNumber(r.rows[i][d]);
    failures.push_back({{"sample", r.first + static_cast<long long>(i)},
                        {"draws", draws_at},
                        {"why", r.failures[i]}});
  }
  j["failures"] = failures;
  Json rows = Json::array();
  const size_t values = r.columns.size() + r.quantities.size();
  for (const auto& row : r.rows) {
    Json cells = Json::array();
    for (size_t c = 0; c < values; ++c) cells.push_back(JsonNumber(row[c]));
    for (size_t c = values; c < row.size(); ++c) cells.push_back(row[c] >= 0);
    rows.push_back(std::move(cells));
  }
  j["rows"] = rows;
  j["cautions"] = r.cautions;
  j["solver"] = JsonSolverAccount(r.account);
  return j.dump(2) + "\n";
}

std::string WriteSpread(const SpreadReport& report, ReportFormat format) {
  switch (format) {
    case ReportFormat::kCsv:
      return WriteSpreadCsv(report);
    case ReportFormat::kJson:
      return WriteSpreadJson(report);
    case ReportFormat::kTable:
      break;
  }
  return WriteSpreadTable(report);
}

std::string DrawSpreadHistograms(const SpreadReport& r) {
  constexpr int kWidth = 760, kPanel = 220, kLeft = 70, kRight = 30, kTop = 50, kGap = 60;
  constexpr int kBins = 40;
  const int panels = static_cast<int>(r.quantities.size());
  const int height = kTop + panels * (kPanel + kGap);
  std::string svg = fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{}\" height=\"{}\" "
      "font-family=\"sans-serif\" font-size=\"12\">\n<rect width=\"100%\" height=\"100%\" "
      "fill=\"white\"/>\n<text x=\"{}\" y=\"24\" font-size=\"15\">{}</text>\n",
      kWidth, height, kLeft,
      XmlEscape(fmt::format("{}: spread of the {}, {} {}", r.title.empty() ? r.file : r.title, r.of,
                            r.rows.size(), r.corners ? "corners" : "samples")));
  const size_t draws = r.columns.size();
  for (int p = 0; p < panels; ++p) {
    const SpreadQuantity& q = r.quantities[static_cast<size_t>(p)];
    const int top = kTop + p * (kPanel + kGap);
    const int bottom = top + kPanel;
    std::vector<double> v;
    for (const auto& row : r.rows) {
      if (std::isfinite(row[draws + static_cast<size_t>(p)])) {
        v.push_back(row[draws + static_cast<size_t>(p)]);
      }
    }
    double lo = q.min, hi = q.max;
    for (const auto& [b, side] : q.bounds) {
      (void)side;
      lo = std::min(lo, b);
      hi = std::max(hi, b);
    }
    if (!(lo <= hi)) lo = hi = 0;
    if (hi == lo) {
      const double pad = lo == 0 ? 1 : std::fabs(lo) * 1e-3;
      lo -= pad;
      hi += pad;
    }
    std::vector<long long> count(kBins, 0);
    for (double x : v) {
      int b = static_cast<int>((x - lo) / (hi - lo) * kBins);
      count[static_cast<size_t>(std::clamp(b, 0, kBins - 1))]++;
    }
    const long long peak = std::max<long long>(1, *std::max_element(count.begin(), count.end()));
    auto px = [&](double x) { return kLeft + (x - lo) / (hi - lo) * (kWidth - kLeft - kRight); };
    svg +=
        fmt::format("<text x=\"{}\" y=\"{}\" font-weight=\"bold\">{}</text>\n", kLeft, top - 8,
                    XmlEscape(q.unit.empty() ? q.name : q.name + " [" + DisplayUnit(q.unit) + "]"));
    svg += fmt::format(
        "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"#888\"/>\n",
        kLeft, top, kWidth - kLeft - kRight, kPanel);
    for (int b = 0; b < kBins; ++b) {
      const double x0 = px(lo + (hi - lo) * b / kBins), x1 = px(lo + (hi - lo) * (b + 1) / kBins);
      const double h = static_cast<double>(count[static_cast<size_t>(b)]) /
                       static_cast<double>(peak) * (kPanel - 10);
      svg += fmt::format(
          "<rect x=\"{:.2f}\" y=\"{:.2f}\" width=\"{:.2f}\" height=\"{:.2f}\" fill=\"#1f5fa6\" "
          "fill-opacity=\"0.75\"/>\n",
          x0, bottom - h, std::max(0.0, x1 - x0 - 1), h);
    }
    for (double t : LinearTicks(lo, hi, 6)) {
      if (t < lo || t > hi) continue;
      svg += fmt::format(
          "<line x1=\"{0:.2f}\" y1=\"{1}\" x2=\"{0:.2f}\" y2=\"{2}\" stroke=\"#888\"/>\n"
          "<text x=\"{0:.2f}\" y=\"{3}\" text-anchor=\"middle\">{4}</text>\n",
          px(t), bottom, bottom + 5, bottom + 18, XmlEscape(FormatEng(t, q.unit, 4)));
    }
    if (std::isfinite(q.nominal)) {
      svg += fmt::format(
          "<line x1=\"{0:.2f}\" y1=\"{1}\" x2=\"{0:.2f}\" y2=\"{2}\" stroke=\"#2a8c5a\" "
          "stroke-dasharray=\"4 3\"/>\n<text x=\"{0:.2f}\" y=\"{3}\" fill=\"#2a8c5a\" "
          "text-anchor=\"middle\">nominal</text>\n",
          px(q.nominal), top, bottom, top + 12);
    }
    for (const auto& [b, side] : q.bounds) {
      svg += fmt::format(
          "<line x1=\"{0:.2f}\" y1=\"{1}\" x2=\"{0:.2f}\" y2=\"{2}\" stroke=\"#c8452c\" "
          "stroke-width=\"2\"/>\n<text x=\"{0:.2f}\" y=\"{3}\" fill=\"#c8452c\" "
          "text-anchor=\"{4}\">{5}</text>\n",
          px(b), top, bottom, top + 26, side > 0 ? "end" : "start",
          XmlEscape((side > 0 ? "bound ≤ " : "bound ≥ ") + FormatEng(b, q.unit, 4)));
    }
    svg += fmt::format("<text x=\"{}\" y=\"{}\" text-anchor=\"end\">{}</text>\n", kLeft - 6,
                       top + 12, peak);
    svg += fmt::format("<text x=\"{}\" y=\"{}\" text-anchor=\"end\">0</text>\n", kLeft - 6, bottom);
  }
  svg += "</svg>\n";
  return svg;
}

}  // namespace knee::cli
