// The hand-written scanner of .knee text (netlist-format.md, "Lexical rules").
// Two layers:
//   LineReader: raw bytes to statements. Checks the text (UTF-8, no NUL or control
//               bytes, line length), removes comments and joins '\' continuations.
//   Scanner:    one statement to tokens, in word mode (statement level, blanks separate
//               tokens) or expression mode (inside parentheses and after 'param NAME =').
// The parser chooses the mode token by token. Nothing here builds a circuit.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include "syntax.h"

namespace knee {

inline constexpr std::size_t kMaxLineBytes = 10000;        // one physical line
inline constexpr std::size_t kMaxStatementBytes = 100000;  // one statement, joined

struct Position {
  int line = 0;
  int column = 0;  // 1-based, in characters (UTF-8 code points)
};

// One statement: the text of its physical lines with comments removed and each
// continuation '\' replaced by a blank; pos[i] is where text[i] came from.
struct LogicalLine {
  std::string text;
  std::vector<Position> pos;  // text.size() + 1 entries; the last is just past the end
  int first_line = 0;
};

struct LexProblem {
  Span span;
  std::string message;
};

class LineReader {
 public:
  explicit LineReader(std::string_view source);
  // Reads the next statement into *line. A statement whose text is unusable (bad byte,
  // overlong line, unclosed string) is skipped after its problem is appended to
  // *problems. Returns false at the end of the text.
  bool Next(LogicalLine* line, std::vector<LexProblem>* problems);

 private:
  // Appends one physical line to *line; returns false (and a problem) if unusable.
  // *continues is set when the line ends with '\'.
  bool ReadPhysicalLine(std::string_view raw, int line_number, LogicalLine* line, bool* continues,
                        std::vector<LexProblem>* problems);

  std::string_view source_;
  std::size_t offset_ = 0;
  int line_number_ = 0;
};

enum class Tok {
  kEnd,
  kWord,    // word mode: a run of characters up to a blank, ( ) = " or ->
  kString,  // "..." (text excludes the quotes)
  kArrow,   // ->
  kEquals,  // =
  kLParen,  // (
  kRParen,  // )
  kNumber,  // expression mode: a number literal with its prefix/unit letters
  kName,    // expression mode: a name, possibly dotted (pin.v)
  kOp,      // expression mode: + - * / ^ ,
  kError,   // a character that cannot start a token here; `error` says why
};

struct Token {
  Tok kind = Tok::kEnd;
  std::size_t begin = 0;  // byte offsets into the statement text
  std::size_t end = 0;
  std::string_view text;
  std::string error;
};

class Scanner {
 public:
  explicit Scanner(const LogicalLine& line) : line_(line) {}
  Token NextWord();
  Token NextExpr();
  Token PeekWord();
  Token PeekExpr();
  bool AtEnd();
  // The place of bytes [begin, end) of the statement; length in characters.
  Span SpanOf(std::size_t begin, std::size_t end) const;
  Span SpanOf(const Token& token) const { return SpanOf(token.begin, token.end); }
  std::string_view Text(std::size_t begin, std::size_t end) const {
    return std::string_view(line_.text).substr(begin, end - begin);
  }
  std::size_t offset() const { return offset_; }
  void set_offset(std::size_t offset) { offset_ = offset; }
  std::size_t size() const { return line_.text.size(); }

 private:
  void SkipBlanks();
  Token Make(Tok kind, std::size_t begin, std::size_t end);

  const LogicalLine& line_;
  std::size_t offset_ = 0;
};

// Builds a one-line LogicalLine for text that does not come from a file (the value of
// --set, a quantity given on the command line, a range): columns count from `where`.
LogicalLine SyntheticLine(std::string_view text, const Span& where);

// Number of UTF-8 code points in `text` (continuation bytes not counted).
int CountChars(std::string_view text);

// Whether `text` is a name: [A-Za-z_][A-Za-z0-9_]*.
bool IsName(std::string_view text);
inline constexpr std::size_t kMaxNameLength = 256;

}  // namespace knee
