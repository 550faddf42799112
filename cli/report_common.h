// Pieces every report writer shares: text layout for tables, CSV quoting, and the JSON
// members that several report kinds carry.
#pragma once

#include <fmt/format.h>

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "report.h"

namespace knee::cli {

// Display width of UTF-8 text in columns (every character knee prints is one column).
size_t DisplayWidth(const std::string& text);
std::string PadLeft(const std::string& text, size_t width);
std::string PadRight(const std::string& text, size_t width);

// Text for SVG/XML content and attribute values (&, <, > and " escaped).
std::string XmlEscape(const std::string& text);

// RFC 4180 quoting for a field that contains a comma, a quote or a line break.
std::string CsvField(const std::string& text);

// Appends FormatRoundTrip(value) to `out`, written in place (WriteRoundTrip): the CSV rows
// of a sweep or a spread make no string per number.
void AppendRoundTrip(double value, fmt::memory_buffer& out);
// Appends the decimal digits of `value` (std::to_chars).
void AppendInteger(long long value, fmt::memory_buffer& out);

// JSON has no NaN or infinity: such a number is written as null.
nlohmann::ordered_json JsonNumber(double value);
// {file, line, column}, or null for a place on the command line.
nlohmann::ordered_json JsonLocation(const SourceLocation& where);
// The `solver` member of docs/json-schema.md.
nlohmann::ordered_json JsonSolverAccount(const SolverAccount& account);

// 'a', 'b' and 'c'
std::string QuotedList(const std::vector<std::string>& names);
// The note under a text report that names the account's undetermined nodes ("" if none).
std::string UndeterminedNote(const SolverAccount& account);
// One element of the `expectations` member of docs/json-schema.md.
nlohmann::ordered_json JsonExpectation(const ExpectationCheck& check);

}  // namespace knee::cli
