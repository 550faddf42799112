// Helpers shared by the parser tests: parse or elaborate a text, collect diagnostics.
#pragma once

#include <gtest/gtest.h>

#include <string>
#include <string_view>
#include <vector>

#include "knee/diagnostics.h"
#include "knee/netlist.h"

namespace knee::testing {

inline constexpr const char* kFile = "t.knee";

// The diagnostics of parsing `text` (empty when it parses).
inline std::vector<Diagnostic> ParseErrors(std::string_view text) {
  Result<Netlist> r = ParseNetlist(text, kFile);
  if (r.ok()) return {};
  return r.errors();
}

// The diagnostics of parsing and then elaborating `text`.
inline std::vector<Diagnostic> AllErrors(std::string_view text, const Overrides& o = {}) {
  Result<Netlist> r = ParseNetlist(text, kFile);
  if (!r.ok()) return r.errors();
  Result<Design> d = Elaborate(*r, o);
  if (d.ok()) return {};
  return d.errors();
}

// Elaborates `text`, failing the test with the rendered diagnostics if it does not.
inline Design MustBuild(std::string_view text, const Overrides& o = {}) {
  Result<Netlist> r = ParseNetlist(text, kFile);
  if (!r.ok()) {
    ADD_FAILURE() << FormatDiagnostics(r.errors(), text);
    return Design{};
  }
  Result<Design> d = Elaborate(*r, o);
  if (!d.ok()) {
    ADD_FAILURE() << FormatDiagnostics(d.errors(), text);
    return Design{};
  }
  return std::move(d).value();
}

// "line:column: message" of a diagnostic, the form most tests compare against.
inline std::string Brief(const Diagnostic& d) {
  return std::to_string(d.where.line) + ":" + std::to_string(d.where.column) + ": " + d.message;
}

// The one diagnostic of `errors`, as Brief(); "" (and a test failure) otherwise.
inline std::string OnlyError(const std::vector<Diagnostic>& errors) {
  if (errors.size() != 1) {
    std::string all;
    for (const Diagnostic& d : errors) all += "\n  " + Brief(d);
    ADD_FAILURE() << "expected exactly one diagnostic, got " << errors.size() << all;
    return "";
  }
  return Brief(errors[0]);
}

inline double ElementValue(const Design& d, std::string_view name) {
  const int i = d.circuit.FindElement(name);
  EXPECT_GE(i, 0) << name;
  return i < 0 ? 0.0 : d.circuit.elements[static_cast<std::size_t>(i)].value;
}

}  // namespace knee::testing
