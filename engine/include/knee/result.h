// Recoverable errors as values: a Diagnostic carries a message and the place in the
// netlist it concerns; Result<T> holds either a value or one or more diagnostics.
#pragma once

#include <string>
#include <utility>
#include <variant>
#include <vector>

namespace knee {

// A place in a netlist. Lines and columns are 1-based; line 0 means "no place"
// (for example an error about a command-line option).
struct SourceLocation {
  std::string file;
  int line = 0;
  int column = 0;
  int length = 1;  // characters the caret line underlines
};

struct Diagnostic {
  SourceLocation where;
  std::string message;  // what is wrong and what was expected, no trailing period
  std::string hint;     // a suggestion ("did you mean 'Rload'?"), may be empty
  // Further places that belong to the same problem (the first definition of a
  // duplicate name, the other elements of a loop of voltage sources).
  std::vector<std::pair<SourceLocation, std::string>> notes;
};

template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : content_(std::move(value)) {}  // NOLINT: implicit by design
  Result(Diagnostic error) : content_(std::vector<Diagnostic>{std::move(error)}) {}  // NOLINT
  Result(std::vector<Diagnostic> errors) : content_(std::move(errors)) {}            // NOLINT

  bool ok() const { return content_.index() == 0; }
  explicit operator bool() const { return ok(); }

  T& value() & { return std::get<0>(content_); }
  const T& value() const& { return std::get<0>(content_); }
  T&& value() && { return std::get<0>(std::move(content_)); }
  T* operator->() { return &value(); }
  const T* operator->() const { return &value(); }
  T& operator*() & { return value(); }
  const T& operator*() const& { return value(); }

  const std::vector<Diagnostic>& errors() const { return std::get<1>(content_); }
  std::vector<Diagnostic>&& take_errors() && { return std::get<1>(std::move(content_)); }

 private:
  std::variant<T, std::vector<Diagnostic>> content_;
};

// For operations that produce nothing but may fail.
struct Done {};
using Status = Result<Done>;

}  // namespace knee
