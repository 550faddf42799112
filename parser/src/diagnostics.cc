#include "knee/diagnostics.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <cstdlib>
#include <limits>
#include <optional>

namespace knee {
namespace {

// Quoted lines longer than this are shown as a window around the caret.
constexpr int kMaxQuotedChars = 120;
constexpr int kContextBefore = 40;

bool IsContinuationByte(char c) { return (static_cast<unsigned char>(c) & 0xC0) == 0x80; }

// The text of 1-based line `number`, without its line end; nullopt if there is none.
std::optional<std::string_view> FindLine(std::string_view text, int number) {
  std::size_t begin = 0;
  if (text.substr(0, 3) == "\xEF\xBB\xBF") begin = 3;
  for (int line = 1; line < number; ++line) {
    const std::size_t nl = text.find('\n', begin);
    if (nl == std::string_view::npos) return std::nullopt;
    begin = nl + 1;
  }
  if (begin > text.size()) return std::nullopt;
  std::size_t end = text.find('\n', begin);
  if (end == std::string_view::npos) end = text.size();
  std::string_view line = text.substr(begin, end - begin);
  if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
  return line;
}

// Calls show(text) for each character of a line as displayed, in order: each UTF-8
// character kept whole, control characters and bytes that are not valid UTF-8 shown as
// '?'. Stops when show returns false. Nothing is stored, so a long line costs nothing
// beyond itself.
template <typename Show>
void ForEachDisplayChar(std::string_view line, Show show) {
  for (std::size_t i = 0; i < line.size();) {
    const auto c = static_cast<unsigned char>(line[i]);
    if (c < 0x80) {
      if (!show(c < 0x20 || c == 0x7F ? std::string_view("?") : line.substr(i, 1))) return;
      ++i;
      continue;
    }
    std::size_t n = 1;
    while (i + n < line.size() && IsContinuationByte(line[i + n]) && n < 4) ++n;
    const std::size_t expected = c >= 0xF0 ? 4 : c >= 0xE0 ? 3 : c >= 0xC0 ? 2 : 0;
    if (expected == n) {
      if (!show(line.substr(i, n))) return;
    } else {
      for (std::size_t k = 0; k < n; ++k) {
        if (!show(std::string_view("?"))) return;
      }
    }
    i += n;
  }
}

int DisplayCharCount(std::string_view line) {
  long long count = 0;
  ForEachDisplayChar(line, [&count](std::string_view) {
    ++count;
    return true;
  });
  return static_cast<int>(std::min<long long>(count, std::numeric_limits<int>::max()));
}

// Display characters [first, last) of a line.
std::string DisplaySlice(std::string_view line, int first, int last) {
  std::string out;
  int index = 0;
  ForEachDisplayChar(line, [&](std::string_view ch) {
    if (index >= first) out += ch;
    return ++index < last;
  });
  return out;
}

std::string Place(const SourceLocation& where) {
  const std::string& file = where.file;
  if (where.line <= 0) return file.empty() ? "" : file + ": ";
  if (where.column <= 0) return fmt::format("{}:{}: ", file, where.line);
  return fmt::format("{}:{}:{}: ", file, where.line, where.column);
}

// Optimal string alignment distance (Levenshtein with adjacent transpositions), or any
// number above `cap` once the distance is known to exceed it. Both names are at most
// kMaxSuggestLength characters (SuggestName's bound), so three rows on the stack suffice
// and a call allocates nothing: SuggestName runs it once per candidate name.
constexpr std::size_t kMaxSuggestLength = 64;

int EditDistance(std::string_view a, std::string_view b, bool fold_case, int cap) {
  // ASCII case folding, as std::tolower in the "C" locale, without its per-call lookup.
  auto fold = [](char x) { return x >= 'A' && x <= 'Z' ? static_cast<char>(x - 'A' + 'a') : x; };
  auto eq = [fold_case, fold](char x, char y) {
    return x == y || (fold_case && fold(x) == fold(y));
  };
  const std::size_t n = a.size(), m = b.size();
  std::array<int, kMaxSuggestLength + 1> rows[3];
  int* before = rows[0].data();  // row i - 2
  int* prev = rows[1].data();    // row i - 1
  int* cur = rows[2].data();     // row i
  for (std::size_t j = 0; j <= m; ++j) prev[j] = static_cast<int>(j);
  int prev_min = 0;
  for (std::size_t i = 1; i <= n; ++i) {
    cur[0] = static_cast<int>(i);
    int row_min = cur[0];
    for (std::size_t j = 1; j <= m; ++j) {
      const int cost = eq(a[i - 1], b[j - 1]) ? 0 : 1;
      int d = std::min({prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost});
      if (i > 1 && j > 1 && eq(a[i - 1], b[j - 2]) && eq(a[i - 2], b[j - 1])) {
        d = std::min(d, before[j - 2] + 1);
      }
      cur[j] = d;
      row_min = std::min(row_min, d);
    }
    // A row's minimum is at least the smaller of the previous row's minimum and the one two
    // rows back plus one (a transposition reaches two rows back), so once two consecutive
    // rows are above the cap, every later row is.
    if (row_min > cap && prev_min > cap) return cap + 1;
    prev_min = row_min;
    int* const spare = before;
    before = prev;
    prev = cur;
    cur = spare;
  }
  return prev[m];
}

}  // namespace

namespace {

// `severity` is "error" or "warning". A place leads ("FILE:LINE:COL: error:", "FILE: error:"
// for a whole file); a problem with no place at all (a command-line option, whose message
// names it) takes the program's one prefix for command-line trouble, "knee: error:".
std::string Format(const Diagnostic& diagnostic, std::string_view source_text,
                   std::string_view severity) {
  const SourceLocation& where = diagnostic.where;
  std::string out = where.file.empty() && where.line <= 0
                        ? fmt::format("knee: {}: {}", severity, diagnostic.message)
                        : fmt::format("{}{}: {}", Place(where), severity, diagnostic.message);
  std::optional<std::string_view> line;
  if (where.line > 0) line = FindLine(source_text, where.line);
  if (line) {
    const int total = DisplayCharCount(*line);
    int caret = std::max(where.column, 1) - 1;  // 0-based character index
    int first = 0;
    int last = total;
    if (total > kMaxQuotedChars) {
      first = std::clamp(caret - kContextBefore, 0, std::max(total - kMaxQuotedChars, 0));
      last = std::min(total, first + kMaxQuotedChars);
    }
    std::string quoted = first > 0 ? "..." : "";
    if (first < last) quoted += DisplaySlice(*line, first, last);
    if (last < total) quoted += "...";
    const int shift = first > 0 ? 3 - first : 0;
    const int caret_pos = std::max(caret + shift, 0);
    const int room = std::max(last + shift + (last < total ? 3 : 0) - caret_pos, 1);
    const int length = std::clamp(where.length, 1, std::max(room, 1));
    const std::string number = std::to_string(where.line);
    const std::size_t width = std::max<std::size_t>(number.size(), 5);
    out += fmt::format("\n{:>{}} | {}", number, width, quoted);
    if (where.column > 0) {
      out += fmt::format("\n{:>{}} | {}^{}", "", width,
                         std::string(static_cast<std::size_t>(caret_pos), ' '),
                         std::string(static_cast<std::size_t>(length - 1), '~'));
    }
  }
  if (!diagnostic.hint.empty()) out += fmt::format("\nhint: {}", diagnostic.hint);
  for (const auto& [place, text] : diagnostic.notes) {
    out += fmt::format("\nnote: {}{}", Place(place), text);
  }
  return out;
}

}  // namespace

std::string FormatDiagnostic(const Diagnostic& diagnostic, std::string_view source_text) {
  return Format(diagnostic, source_text, "error");
}

std::string FormatWarning(const Diagnostic& diagnostic, std::string_view source_text) {
  return Format(diagnostic, source_text, "warning");
}

std::string FormatDiagnostics(const std::vector<Diagnostic>& diagnostics,
                              std::string_view source_text) {
  std::string out;
  for (const Diagnostic& d : diagnostics) {
    out += FormatDiagnostic(d, source_text);
    out += '\n';
  }
  if (diagnostics.size() > 1) out += fmt::format("{} errors\n", diagnostics.size());
  return out;
}

namespace {

// SuggestName over any range of names that read as std::string_view.
template <typename Names>
std::string Closest(std::string_view wrong, const Names& candidates) {
  if (wrong.empty() || wrong.size() > kMaxSuggestLength) return "";
  std::string_view best;
  bool found = false;
  int best_folded = 0, best_exact = 0;
  for (const auto& candidate : candidates) {
    const std::string_view c = candidate;
    if (c.empty() || c.size() > kMaxSuggestLength || c == wrong) continue;
    // Close enough to be a typo: a case-only difference, or about one edit in three
    // characters (common practice, no source); nothing farther can be suggested.
    const int longest = static_cast<int>(std::max(wrong.size(), c.size()));
    const int allowed = std::min(std::max(1, longest / 3), static_cast<int>(wrong.size()) - 1);
    const int gap = std::abs(static_cast<int>(wrong.size()) - static_cast<int>(c.size()));
    if (gap > allowed) continue;
    const int cap = found ? std::min(allowed, best_folded) : allowed;
    const int folded = EditDistance(wrong, c, true, cap);
    if (folded > cap) continue;
    const int exact = EditDistance(wrong, c, false, static_cast<int>(kMaxSuggestLength));
    if (!found || folded < best_folded || (folded == best_folded && exact < best_exact)) {
      best = c;
      found = true;
      best_folded = folded;
      best_exact = exact;
    }
  }
  return std::string(best);
}

}  // namespace

std::string SuggestName(std::string_view wrong, const std::vector<std::string>& candidates) {
  return Closest(wrong, candidates);
}

std::string SuggestNodeName(std::string_view wrong, std::span<const Name> nodes) {
  return Closest(wrong, nodes);
}

}  // namespace knee
