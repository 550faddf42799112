// Writers of the `knee hand` report (docs/hand-models.md, "Reading the report").
#include "report_hand.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

#include "eng_format.h"
#include "report_common.h"

namespace knee::cli {
namespace {

double Error(const std::vector<double>& values, size_t model) { return values[model] - values[0]; }

// A block of rows: name, exact value, then value and error per simplified model.
struct Block {
  std::string heading;
  std::string unit;
  std::vector<std::string> names;
  std::vector<const std::vector<double>*> values;
};

std::string WriteBlock(const HandReport& r, const Block& b, size_t name_width) {
  const size_t models = r.models.size();
  std::vector<std::string> head{b.heading, r.models[0].name};
  for (size_t m = 1; m < models; ++m) {
    head.push_back(r.models[m].name);
    head.push_back("error");
  }
  std::vector<std::vector<std::string>> cells;
  for (size_t k = 0; k < b.names.size(); ++k) {
    const std::vector<double>& v = *b.values[k];
    std::vector<std::string> line{"  " + b.names[k], FormatEng(v[0], b.unit)};
    for (size_t m = 1; m < models; ++m) {
      line.push_back(FormatEng(v[m], b.unit));
      line.push_back(r.models[m].has_answer && r.models[0].has_answer
                         ? FormatEng(Error(v, m), b.unit)
                         : FormatEng(std::nan(""), b.unit));
    }
    cells.push_back(std::move(line));
  }
  std::vector<size_t> width(head.size(), 9);
  width[0] = name_width;
  for (size_t c = 0; c < head.size(); ++c) width[c] = std::max(width[c], DisplayWidth(head[c]));
  for (const auto& line : cells) {
    for (size_t c = 0; c < line.size(); ++c) width[c] = std::max(width[c], DisplayWidth(line[c]));
  }
  auto emit = [&](const std::vector<std::string>& line) {
    std::string out = PadRight(line[0], width[0]);
    for (size_t c = 1; c < line.size(); ++c) {
      // two spaces before each model's value, one before its error
      out += (c % 2 == 1 ? "   " : " ") + PadLeft(line[c], width[c]);
    }
    return out + "\n";
  };
  std::string out = emit(head);
  for (const auto& line : cells) out += emit(line);
  return out;
}

std::string Tolerance(const ExpectationCheck& e) {
  return e.relative ? fmt::format("{:g} %", e.tolerance * 100) : FormatEng(e.tolerance, e.unit);
}

std::string CsvNumber(double value) { return std::isfinite(value) ? FormatRoundTrip(value) : ""; }

// The CSV layout, shared with the JSON "columns"/"rows" members: one row per model.
struct Table {
  std::vector<std::pair<std::string, std::string>> columns;  // name, unit
  std::vector<std::vector<std::string>> text;                // CSV cells
  std::vector<nlohmann::ordered_json> json;                  // JSON rows
};

Table BuildTable(const HandReport& r) {
  Table t;
  t.columns.push_back({"model", ""});
  for (const HandDiodeRow& d : r.diodes) {
    t.columns.push_back({d.name + ".state", ""});
    t.columns.push_back({d.name + ".v", "V"});
    t.columns.push_back({d.name + ".i", "A"});
    t.columns.push_back({d.name + ".v_error", "V"});
    t.columns.push_back({d.name + ".i_error", "A"});
  }
  for (const HandNodeRow& n : r.nodes) {
    t.columns.push_back({n.name + ".v", "V"});
    t.columns.push_back({n.name + ".v_error", "V"});
  }
  for (const HandDiodeRow& d : r.diodes) t.columns.push_back({d.name + ".rd_exact", "Ohm"});
  const double nan = std::nan("");
  for (size_t m = 0; m < r.models.size(); ++m) {
    const bool usable = r.models[m].has_answer;
    const bool errors = usable && r.models[0].has_answer;
    std::vector<std::string> row{r.models[m].name};
    nlohmann::ordered_json j = nlohmann::ordered_json::array();
    j.push_back(r.models[m].name);
    auto number = [&](double value) {
      row.push_back(CsvNumber(value));
      j.push_back(JsonNumber(value));
    };
    for (const HandDiodeRow& d : r.diodes) {
      row.push_back(usable ? d.state[m] : "");
      j.push_back(usable ? nlohmann::ordered_json(d.state[m]) : nlohmann::ordered_json(nullptr));
      number(usable ? d.v[m] : nan);
      number(usable ? d.i[m] : nan);
      number(errors ? Error(d.v, m) : nan);
      number(errors ? Error(d.i, m) : nan);
    }
    for (const HandNodeRow& n : r.nodes) {
      number(usable ? n.v[m] : nan);
      number(errors ? Error(n.v, m) : nan);
    }
    for (const HandDiodeRow& d : r.diodes) number(m == 0 ? d.rd : nan);
    t.text.push_back(std::move(row));
    t.json.push_back(std::move(j));
  }
  return t;
}

}  // namespace

std::string WriteHandTable(const HandReport& r) {
  std::string name = r.title.empty() ? r.file : "\"" + r.title + "\"";
  std::string out = fmt::format("{}: hand models beside the exact bias point at {}\n", name,
                                FormatEng(r.temp, "°C", 4));
  for (const std::string& caution : r.cautions) out += "CAUTION: " + caution + "\n";
  for (size_t m = 1; m < r.models.size(); ++m) {
    out += fmt::format("  {:<6} {}\n", r.models[m].name, r.models[m].description);
  }
  out += "\n";

  size_t name_width = 16;
  for (const HandDiodeRow& d : r.diodes)
    name_width = std::max(name_width, DisplayWidth(d.name) + 2);
  for (const HandNodeRow& n : r.nodes) name_width = std::max(name_width, DisplayWidth(n.name) + 2);

  if (!r.diodes.empty()) {
    // States: one column per model, a mark where a model disagrees with the exact one.
    std::vector<size_t> width;
    for (const HandModelColumn& m : r.models)
      width.push_back(std::max<size_t>(DisplayWidth(m.name), 10));
    std::string line = PadRight("diode state", name_width);
    for (size_t m = 0; m < r.models.size(); ++m)
      line += "   " + PadRight(r.models[m].name, width[m]);
    out += line.substr(0, line.find_last_not_of(' ') + 1) + "\n";
    for (const HandDiodeRow& d : r.diodes) {
      line = PadRight("  " + d.name, name_width);
      for (size_t m = 0; m < r.models.size(); ++m) {
        std::string s = r.models[m].has_answer ? d.state[m] : "—";
        if (m > 0 && r.models[m].has_answer && r.models[0].has_answer && d.state[m] != d.state[0]) {
          s += " *";
        }
        line += "   " + PadRight(s, width[m]);
      }
      out += line.substr(0, line.find_last_not_of(' ') + 1) + "\n";
    }
    out += "\n";
    Block v{"diode voltage", "V", {}, {}};
    Block i{"diode current", "A", {}, {}};
    for (const HandDiodeRow& d : r.diodes) {
      v.names.push_back(d.name);
      v.values.push_back(&d.v);
      i.names.push_back(d.name);
      i.values.push_back(&d.i);
    }
    out += WriteBlock(r, v, name_width) + "\n" + WriteBlock(r, i, name_width) + "\n";
  }
  Block nv{"node voltage", "V", {}, {}};
  for (const HandNodeRow& n : r.nodes) {
    nv.names.push_back(n.name);
    nv.values.push_back(&n.v);
  }
  if (!r.nodes.empty()) out += WriteBlock(r, nv, name_width) + "\n";

  bool any_rd = false;
  for (const HandDiodeRow& d : r.diodes) any_rd |= std::isfinite(d.rd);
  if (any_rd) {
    out += "small-signal resistance n·Vt/|I| of the conducting diodes at the exact bias point\n";
    for (const HandDiodeRow& d : r.diodes) {
      if (!std::isfinite(d.rd)) continue;
      out += fmt::format("{}{:>10}  at {}\n", PadRight("  " + d.name, name_width),
                         FormatEng(d.rd, "Ohm"), FormatEng(d.i[0], "A"));
    }
    out += "\n";
  }

  out += "state search\n";
  std::vector<std::string> differing;
  for (size_t m = 1; m < r.models.size(); ++m) {
    const HandModelColumn& c = r.models[m];
    out += fmt::format("  {:<6} {}; {}: {} state sets tried, {} undetermined, {} consistent{}\n",
                       c.name, c.search_status,
                       c.exhaustive ? "exhaustive" : "iterative from the exact states",
                       c.sets_tried, c.singular_sets, c.consistent_sets,
                       c.exhaustive ? "" : " (uniqueness not checked)");
    if (!c.detail.empty()) out += "         " + c.detail + "\n";
    if (c.has_answer && r.models[0].has_answer && !c.states_match) differing.push_back(c.name);
  }
  if (r.models[0].has_answer) {
    out += differing.empty()
               ? "  every model's states match the exact conducting set\n"
               : fmt::format("  states differ from the exact conducting set (marked *) under: {}\n",
                             fmt::join(differing, ", "));
  }

  if (!r.expectations.empty()) {
    out += "\n";
    for (const HandExpectation& x : r.expectations) {
      const ExpectationCheck& e = x.check;
      out += fmt::format("  {} expect {} = {} within {}: exact {}, error {}\n",
                         e.met ? "met   " : "MISSED", e.quantity, FormatEng(e.expected, e.unit),
                         Tolerance(e), FormatEng(e.actual, e.unit),
                         FormatEng(e.actual - e.expected, e.unit));
      std::string others;
      for (size_t m = 1; m < r.models.size() && m < x.models.size(); ++m) {
        others += fmt::format("{}{} {}", others.empty() ? "" : ", ", r.models[m].name,
                              FormatEng(x.models[m], e.unit));
      }
      if (!others.empty()) out += "         simplified: " + others + "\n";
    }
  }
  if (!r.exact_failure.empty()) out += "\nno exact solution: " + r.exact_failure + "\n";
  const SolverAccount& a = r.account;
  std::string aids = a.aids.empty() ? "no aids" : fmt::format("aids: {}", fmt::join(a.aids, ", "));
  std::string residual = fmt::format("largest KCL residual {:.2e} A", a.max_kcl_residual);
  if (!a.worst_node.empty()) residual += " at " + a.worst_node;
  out += fmt::format("\nsolver (exact model): {}, {} Newton steps, {}; {}\n", a.method,
                     a.newton_steps, aids, residual);
  out += UndeterminedNote(a);
  return out;
}

std::string WriteHandCsv(const HandReport& r) {
  const Table t = BuildTable(r);
  std::string out;
  for (size_t c = 0; c < t.columns.size(); ++c) {
    if (c) out += ',';
    const auto& [name, unit] = t.columns[c];
    out += CsvField(unit.empty() ? name : fmt::format("{} [{}]", name, unit));
  }
  out += "\n";
  for (const auto& row : t.text) {
    for (size_t c = 0; c < row.size(); ++c) {
      if (c) out += ',';
      out += CsvField(row[c]);
    }
    out += "\n";
  }
  return out;
}

std::string WriteHandJson(const HandReport& r) {
  using Json = nlohmann::ordered_json;
  Json j;
  j["format"] = "knee-result/1";
  j["title"] = r.title;
  j["file"] = r.file;
  j["analysis"] = "hand";
  j["temp_c"] = r.temp;
  Json models = Json::array();
  for (size_t m = 0; m < r.models.size(); ++m) {
    const HandModelColumn& c = r.models[m];
    Json x = {{"name", c.name}, {"description", c.description}, {"has_answer", c.has_answer}};
    if (m > 0) {
      x["search"] = {{"status", c.search_status},
                     {"exhaustive", c.exhaustive},
                     {"sets_tried", c.sets_tried},
                     {"singular_sets", c.singular_sets},
                     {"consistent_sets", c.consistent_sets},
                     {"detail", c.detail}};
      x["states_match_exact"] = c.states_match;
    }
    models.push_back(std::move(x));
  }
  j["models"] = std::move(models);
  const Table t = BuildTable(r);
  Json columns = Json::array();
  for (const auto& [name, unit] : t.columns) columns.push_back({{"name", name}, {"unit", unit}});
  j["columns"] = std::move(columns);
  j["rows"] = t.json;
  Json expectations = Json::array();
  for (const HandExpectation& x : r.expectations) {
    const ExpectationCheck& e = x.check;
    Json per_model = Json::object();
    for (size_t m = 0; m < r.models.size() && m < x.models.size(); ++m) {
      per_model[r.models[m].name] = JsonNumber(x.models[m]);
    }
    Json expectation = JsonExpectation(e);
    expectation["models"] = std::move(per_model);
    expectations.push_back(std::move(expectation));
  }
  j["expectations"] = std::move(expectations);
  j["exact_failure"] = r.exact_failure;
  j["solver"] = JsonSolverAccount(r.account);
  j["cautions"] = r.cautions;
  return j.dump(2) + "\n";
}

std::string WriteHandReport(const HandReport& report, ReportFormat format) {
  switch (format) {
    case ReportFormat::kTable:
      return WriteHandTable(report);
    case ReportFormat::kCsv:
      return WriteHandCsv(report);
    case ReportFormat::kJson:
      return WriteHandJson(report);
  }
  return {};
}

}  // namespace knee::cli
