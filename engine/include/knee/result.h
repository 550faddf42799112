// Recoverable errors as values: a Diagnostic carries a message and the place in the
// netlist it concerns; Result<T> holds either a value or one or more diagnostics.
#pragma once

#include <string>
#include <string_view>
#include <utility>
#include <variant>
#include <vector>

namespace knee {

// The name of a netlist file (or of the command-line option a message is about) in a
// SourceLocation. Each distinct name is stored once for the life of the process and a
// FileName refers to it: the million elements of a large netlist share one name instead
// of holding a copy each, and a SourceLocation stays a small, trivially copyable value.
// A process reads a handful of files, so the table of names stays small. Thread-safe.
class FileName {
 public:
  FileName() = default;  // the empty name
  // Implicit, so that a file name is given as a string wherever a location is made.
  FileName(std::string_view name);                                         // NOLINT
  FileName(const std::string& name) : FileName(std::string_view(name)) {}  // NOLINT
  FileName(const char* name) : FileName(std::string_view(name)) {}         // NOLINT

  const std::string& str() const { return name_ != nullptr ? *name_ : Empty(); }
  operator const std::string&() const { return str(); }  // NOLINT: reads as a string
  bool empty() const { return name_ == nullptr; }

  // Equal names are the same stored string, so two FileNames compare by address.
  friend bool operator==(const FileName& a, const FileName& b) { return a.name_ == b.name_; }
  friend bool operator==(const FileName& a, std::string_view b) { return a.str() == b; }
  friend bool operator==(const FileName& a, const std::string& b) { return a.str() == b; }
  friend bool operator==(const FileName& a, const char* b) { return a.str() == b; }

 private:
  static const std::string& Empty();
  const std::string* name_ = nullptr;  // into the process-wide table; nullptr for ""
};

// A place in a netlist. Lines and columns are 1-based; line 0 means "no place"
// (for example an error about a command-line option).
struct SourceLocation {
  FileName file;
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
