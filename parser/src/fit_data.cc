#include "knee/fit_data.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <optional>

#include "knee/diagnostics.h"
#include "knee/diode_law.h"
#include "lexer.h"
#include "numbers.h"
#include "part_keys.h"

namespace knee {
namespace {

enum class Column { kV, kI, kTemp, kWeight };
constexpr const char* kColumnNames[] = {"v", "i", "temp", "weight"};
constexpr const char* kColumnUnits[] = {"V", "A", "C", ""};

struct Cell {
  std::string_view text;  // trimmed
  int column = 1;         // 1-based character column of the trimmed text (or of the cell)
  int length = 1;
};

std::string_view Trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

std::vector<Cell> SplitCells(std::string_view line) {
  std::vector<Cell> cells;
  std::size_t begin = 0;
  while (true) {
    const std::size_t comma = line.find(',', begin);
    const std::string_view raw = line.substr(
        begin, comma == std::string_view::npos ? std::string_view::npos : comma - begin);
    std::size_t lead = 0;
    while (lead < raw.size() && (raw[lead] == ' ' || raw[lead] == '\t')) ++lead;
    Cell c;
    c.text = Trim(raw);
    c.column = CountChars(line.substr(0, begin + lead)) + 1;
    c.length = std::max(1, CountChars(c.text));
    cells.push_back(c);
    if (comma == std::string_view::npos) break;
    begin = comma + 1;
  }
  return cells;
}

struct ColumnSpec {
  Column kind = Column::kV;
  double scale = 1;       // the bracketed unit's factor ("mA": 1e-3)
  bool has_unit = false;  // cells then carry no unit of their own
  bool kelvin = false;    // temp [K]
  std::string unit_text;  // as written in the brackets
};

SourceLocation At(const FileName& file, int line, const Cell& c) {
  return SourceLocation{file, line, c.column, c.length};
}

Diagnostic Error(SourceLocation where, std::string message, std::string hint = "") {
  Diagnostic d;
  d.where = where;
  d.message = std::move(message);
  d.hint = std::move(hint);
  return d;
}

constexpr const char* kHeaderExample = "v [V],i [mA],temp [C]";

// One header cell: a column name and an optional "[unit]".
std::optional<ColumnSpec> ReadHeaderCell(const FileName& file, int line, const Cell& c,
                                         std::vector<Diagnostic>* errors) {
  std::string_view name = c.text;
  std::string_view unit;
  const std::size_t open = name.find('[');
  if (open != std::string_view::npos) {
    const std::size_t close = name.find(']', open);
    if (close == std::string_view::npos || Trim(name.substr(close + 1)).size() > 0) {
      errors->push_back(Error(At(file, line, c),
                              fmt::format("header cell '{}' is not a name with a unit in "
                                          "brackets",
                                          c.text),
                              fmt::format("write for example {}", kHeaderExample)));
      return std::nullopt;
    }
    unit = Trim(name.substr(open + 1, close - open - 1));
    name = Trim(name.substr(0, open));
  }
  ColumnSpec spec;
  int kind = -1;
  for (int k = 0; k < 4; ++k) {
    if (name == kColumnNames[k]) kind = k;
  }
  if (kind < 0) {
    const std::string near = SuggestName(name, {"v", "i", "temp", "weight"});
    errors->push_back(Error(At(file, line, c),
                            fmt::format("unknown column '{}'; the columns are v, i, temp and "
                                        "weight",
                                        name),
                            near.empty() ? fmt::format("write for example {}", kHeaderExample)
                                         : fmt::format("did you mean '{}'?", near)));
    return std::nullopt;
  }
  spec.kind = static_cast<Column>(kind);
  if (unit.empty()) return spec;
  spec.has_unit = true;
  spec.unit_text = std::string(unit);
  const std::string_view want = kColumnUnits[kind];
  auto bad_unit = [&](std::string expected) {
    errors->push_back(Error(
        At(file, line, c),
        fmt::format("unit '{}' does not fit column '{}'; expected {}", unit, name, expected)));
    return std::nullopt;
  };
  if (spec.kind == Column::kTemp) {
    if (unit == "C") return spec;
    if (unit == "K") {
      spec.kelvin = true;
      return spec;
    }
    return bad_unit("C (degrees Celsius) or K (kelvin)");
  }
  if (spec.kind == Column::kWeight) return bad_unit("no unit");
  NumberLiteral literal;
  NumberError error;
  const std::string probe = "1" + std::string(unit);
  if (!ParseNumber(probe, &literal, &error) || literal.unit != want) {
    return bad_unit(fmt::format("{} with an SI prefix such as m{}", want, want));
  }
  spec.scale = literal.value;
  return spec;
}

struct Header {
  std::vector<ColumnSpec> columns;
  std::array<int, 4> index{-1, -1, -1, -1};  // by Column
};

bool ReadHeader(const FileName& file, int line, std::string_view text, Header* header,
                std::vector<Diagnostic>* errors) {
  const std::vector<Cell> cells = SplitCells(text);
  const std::size_t before = errors->size();
  for (const Cell& c : cells) {
    std::optional<ColumnSpec> spec = ReadHeaderCell(file, line, c, errors);
    if (!spec) continue;
    int& slot = header->index[static_cast<int>(spec->kind)];
    if (slot >= 0) {
      errors->push_back(Error(
          At(file, line, c),
          fmt::format("column '{}' is given twice", kColumnNames[static_cast<int>(spec->kind)]),
          "keep one of the two"));
      continue;
    }
    slot = static_cast<int>(header->columns.size());
    header->columns.push_back(*spec);
  }
  if (errors->size() != before) return false;
  for (Column need : {Column::kV, Column::kI}) {
    if (header->index[static_cast<int>(need)] >= 0) continue;
    const Cell& last = cells.back();
    SourceLocation where{file, line, last.column + last.length, 1};
    errors->push_back(Error(
        where,
        fmt::format("the header has no '{}' column; the columns v (volts) and i (amperes) are "
                    "required",
                    kColumnNames[static_cast<int>(need)]),
        fmt::format("add it, for example: {}", kHeaderExample)));
  }
  return errors->size() == before;
}

// A data cell's value in SI units (degrees Celsius for temp).
std::optional<double> ReadCell(const FileName& file, int line, const Cell& c,
                               const ColumnSpec& spec, std::vector<Diagnostic>* errors) {
  const char* name = kColumnNames[static_cast<int>(spec.kind)];
  if (c.text.empty()) {
    errors->push_back(Error(At(file, line, c), fmt::format("empty cell in column '{}'", name),
                            "write a number, or remove the row"));
    return std::nullopt;
  }
  NumberLiteral literal;
  NumberError error;
  if (!ParseNumber(c.text, &literal, &error)) {
    SourceLocation where = At(file, line, c);
    where.column += CountChars(c.text.substr(0, error.offset));
    where.length = std::max(1, static_cast<int>(error.length));
    errors->push_back(Error(
        where, fmt::format("'{}' in column '{}' is not a number: {}", c.text, name, error.message),
        error.hint.empty() ? "write a number such as 0.652, 10m or 4k7" : error.hint));
    return std::nullopt;
  }
  if (spec.has_unit && !literal.unit.empty()) {
    errors->push_back(Error(At(file, line, c),
                            fmt::format("'{}' carries a unit, but the header of column '{}' "
                                        "already gives [{}]",
                                        c.text, name, spec.unit_text),
                            "write the number alone"));
    return std::nullopt;
  }
  // ValuePlace holds views: the text it names must outlive it.
  const std::string place_name = fmt::format("column '{}'", name);
  const ValuePlace place{place_name, kColumnUnits[static_cast<int>(spec.kind)]};
  double value = 0;
  std::string message, hint;
  if (!ApplyPlace(literal, c.text, place, &value, &message, &hint)) {
    errors->push_back(Error(At(file, line, c), message, hint));
    return std::nullopt;
  }
  if (spec.kelvin) return value - kZeroCelsius;
  return value * spec.scale;
}

// Half a unit of the last digit written in a number cell ("0.652" -> 0.0005, "652m" ->
// 0.0005, "1.5e-1" -> 0.005), in the cell's own units: the text with its last mantissa digit
// moved by one, read again.
double HalfLastDigit(std::string_view text, double value) {
  std::size_t end = text.size();
  for (std::size_t k = 1; k + 1 < text.size(); ++k) {
    const bool mark = text[k] == 'e' || text[k] == 'E';
    const bool before = (text[k - 1] >= '0' && text[k - 1] <= '9') || text[k - 1] == '.';
    const char next = text[k + 1];
    const bool after = (next >= '0' && next <= '9') || next == '-' || next == '+';
    if (mark && before && after) {
      end = k;
      break;
    }
  }
  std::size_t last = std::string::npos;
  for (std::size_t k = 0; k < end; ++k) {
    if (text[k] >= '0' && text[k] <= '9') last = k;
  }
  if (last == std::string::npos) return 0;
  std::string moved(text);
  moved[last] = moved[last] == '9' ? '8' : static_cast<char>(moved[last] + 1);
  NumberLiteral literal;
  NumberError error;
  if (!ParseNumber(moved, &literal, &error)) return 0;
  return 0.5 * std::fabs(literal.value - value);
}

}  // namespace

Result<FitData> ReadFitData(std::string_view text, const std::string& file_name) {
  const FileName file(file_name);
  FitData data;
  std::vector<Diagnostic> errors;
  if (text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);
  Header header;
  bool have_header = false;
  int line_number = 0;
  std::size_t begin = 0;
  while (begin <= text.size() && errors.size() < 20) {
    std::size_t end = text.find('\n', begin);
    if (end == std::string_view::npos) end = text.size();
    std::string_view line = text.substr(begin, end - begin);
    ++line_number;
    begin = end + 1;
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    const std::string_view content = Trim(line);
    if (content.empty() || content.front() == '#') {
      if (end == text.size()) break;
      continue;
    }
    if (!have_header) {
      have_header = true;
      data.header_where = SourceLocation{file, line_number, 1, 1};
      if (!ReadHeader(file, line_number, line, &header, &errors)) break;
      const int t = header.index[static_cast<int>(Column::kTemp)];
      data.has_temp_column = t >= 0;
      if (data.has_temp_column) {
        const Cell c = SplitCells(line)[static_cast<std::size_t>(t)];
        data.temp_where = At(file, line_number, c);
      }
      continue;
    }
    const std::vector<Cell> cells = SplitCells(line);
    if (cells.size() != header.columns.size()) {
      const bool few = cells.size() < header.columns.size();
      const Cell& at = few ? cells.back() : cells[header.columns.size()];
      SourceLocation where = At(file, line_number, at);
      if (few) where.column += at.length, where.length = 1;
      errors.push_back(
          Error(where,
                fmt::format("the row has {} cell{} but the header has {} columns", cells.size(),
                            cells.size() == 1 ? "" : "s", header.columns.size()),
                few ? "add the missing cells" : "remove the extra cells"));
      continue;
    }
    FitPoint p;
    bool ok = true;
    for (std::size_t k = 0; k < cells.size(); ++k) {
      std::optional<double> v = ReadCell(file, line_number, cells[k], header.columns[k], &errors);
      if (!v) {
        ok = false;
        continue;
      }
      const SourceLocation where = At(file, line_number, cells[k]);
      switch (header.columns[k].kind) {
        case Column::kV: {
          p.v = *v, p.v_where = where;
          NumberLiteral literal;
          NumberError error;
          if (ParseNumber(cells[k].text, &literal, &error)) {
            p.v_resolution = HalfLastDigit(cells[k].text, literal.value) * header.columns[k].scale;
          }
          break;
        }
        case Column::kI:
          p.i = *v, p.i_where = where;
          break;
        case Column::kTemp:
          p.temp = *v, p.temp_where = where;
          break;
        case Column::kWeight:
          p.weight = *v, p.weight_where = where;
          break;
      }
    }
    if (ok) data.points.push_back(p);
    if (end == text.size()) break;
  }
  if (!errors.empty()) return errors;
  if (!have_header) {
    return Error(
        SourceLocation{file, 1, 1, 1}, "the file is empty; expected a header row",
        fmt::format("start with a header such as {}, then one row per point", kHeaderExample));
  }
  return data;
}

}  // namespace knee
