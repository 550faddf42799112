#include "lexer.h"

#include <fmt/format.h>

namespace knee {
namespace {

bool IsBlank(char c) { return c == ' ' || c == '\t'; }
bool IsDigit(char c) { return c >= '0' && c <= '9'; }
bool IsLetter(char c) { return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '_'; }
bool IsContinuationByte(unsigned char c) { return (c & 0xC0) == 0x80; }

// Length of the valid UTF-8 sequence starting at text[i], or 0 if it is not valid
// (overlong forms, surrogates and code points above U+10FFFF are invalid; RFC 3629).
std::size_t Utf8SequenceLength(std::string_view text, std::size_t i) {
  const auto b0 = static_cast<unsigned char>(text[i]);
  if (b0 < 0x80) return 1;
  std::size_t n = 0;
  unsigned char lo = 0x80, hi = 0xBF;
  if (b0 >= 0xC2 && b0 <= 0xDF) {
    n = 2;
  } else if (b0 >= 0xE0 && b0 <= 0xEF) {
    n = 3;
    if (b0 == 0xE0) lo = 0xA0;
    if (b0 == 0xED) hi = 0x9F;
  } else if (b0 >= 0xF0 && b0 <= 0xF4) {
    n = 4;
    if (b0 == 0xF0) lo = 0x90;
    if (b0 == 0xF4) hi = 0x8F;
  } else {
    return 0;
  }
  if (i + n > text.size()) return 0;
  for (std::size_t k = 1; k < n; ++k) {
    const auto b = static_cast<unsigned char>(text[i + k]);
    const unsigned char low = k == 1 ? lo : 0x80;
    const unsigned char high = k == 1 ? hi : 0xBF;
    if (b < low || b > high) return 0;
  }
  return n;
}

// The first byte that a netlist may not contain, as a problem; empty message if none.
LexProblem CheckBytes(std::string_view raw, int line_number) {
  int column = 0;
  for (std::size_t i = 0; i < raw.size();) {
    ++column;
    const auto c = static_cast<unsigned char>(raw[i]);
    if (c == 0) {
      return {{line_number, column, 1}, "NUL byte in the text; a netlist is UTF-8 text"};
    }
    if ((c < 0x20 && c != '\t') || c == 0x7F) {
      return {{line_number, column, 1},
              fmt::format("control character 0x{:02X} in the text; a netlist is plain text", c)};
    }
    const std::size_t n = Utf8SequenceLength(raw, i);
    if (n == 0) {
      return {{line_number, column, 1},
              fmt::format("invalid UTF-8 byte 0x{:02X}; a netlist must be UTF-8 text", c)};
    }
    i += n;
  }
  return {};
}

// Whether the last non-blank character of `raw` is a backslash.
bool EndsWithBackslash(std::string_view raw) {
  std::size_t end = raw.size();
  while (end > 0 && IsBlank(raw[end - 1])) --end;
  return end > 0 && raw[end - 1] == '\\';
}

}  // namespace

int CountChars(std::string_view text) {
  int n = 0;
  for (char c : text) {
    if (!IsContinuationByte(static_cast<unsigned char>(c))) ++n;
  }
  return n;
}

bool IsName(std::string_view text) {
  if (text.empty() || !IsLetter(text[0])) return false;
  for (char c : text) {
    if (!IsLetter(c) && !IsDigit(c)) return false;
  }
  return true;
}

LineReader::LineReader(std::string_view source) : source_(source) {
  // A UTF-8 byte order mark at the start is allowed and ignored.
  if (source_.substr(0, 3) == "\xEF\xBB\xBF") offset_ = 3;
}

bool LineReader::ReadPhysicalLine(std::string_view raw, int line_number, LogicalLine* line,
                                  bool* continues, std::vector<LexProblem>* problems) {
  *continues = false;
  if (raw.size() > kMaxLineBytes) {
    const int column = CountChars(raw.substr(0, kMaxLineBytes)) + 1;
    problems->push_back({{line_number, column, 1},
                         fmt::format("line is too long ({} bytes); the limit is {} bytes",
                                     raw.size(), kMaxLineBytes)});
    *continues = EndsWithBackslash(raw);
    return false;
  }
  LexProblem bad = CheckBytes(raw, line_number);
  if (!bad.message.empty()) {
    problems->push_back(std::move(bad));
    *continues = EndsWithBackslash(raw);
    return false;
  }
  bool in_string = false;
  int string_column = 0;
  int column = 0;
  for (std::size_t i = 0; i < raw.size(); ++i) {
    const char c = raw[i];
    if (!IsContinuationByte(static_cast<unsigned char>(c))) ++column;
    if (in_string) {
      if (c == '"') in_string = false;
    } else if (c == '#') {
      break;
    } else if (c == '"') {
      in_string = true;
      string_column = column;
    } else if (c == '\\') {
      std::size_t k = i + 1;
      while (k < raw.size() && IsBlank(raw[k])) ++k;
      if (k == raw.size() || raw[k] == '#') {
        line->text.push_back(' ');
        line->pos.push_back({line_number, column});
        *continues = true;
        return true;
      }
    }
    line->text.push_back(c);
    line->pos.push_back({line_number, column});
  }
  if (in_string) {
    problems->push_back({{line_number, string_column, 1},
                         "unclosed string; expected '\"' before the end of the line"});
    return false;
  }
  return true;
}

bool LineReader::Next(LogicalLine* line, std::vector<LexProblem>* problems) {
  line->text.clear();
  line->pos.clear();
  line->first_line = 0;
  if (offset_ >= source_.size()) return false;
  bool bad = false;
  while (offset_ < source_.size()) {
    std::size_t newline = source_.find('\n', offset_);
    if (newline == std::string_view::npos) newline = source_.size();
    std::string_view raw = source_.substr(offset_, newline - offset_);
    offset_ = newline + 1;
    ++line_number_;
    if (!raw.empty() && raw.back() == '\r') raw.remove_suffix(1);  // CRLF line ends
    if (line->first_line == 0) line->first_line = line_number_;
    bool continues = false;
    if (bad) {
      continues = EndsWithBackslash(raw);
    } else if (!ReadPhysicalLine(raw, line_number_, line, &continues, problems)) {
      bad = true;
    } else if (line->text.size() > kMaxStatementBytes) {
      problems->push_back(
          {{line->first_line, 1, 1},
           fmt::format("statement is too long (more than {} bytes)", kMaxStatementBytes)});
      bad = true;
    }
    if (!continues) break;
  }
  if (bad) {
    line->text.clear();
    line->pos.clear();
  }
  const Position end = line->pos.empty()
                           ? Position{line_number_, 1}
                           : Position{line->pos.back().line, line->pos.back().column + 1};
  line->pos.push_back(end);
  return true;
}

LogicalLine SyntheticLine(std::string_view text, const Span& where) {
  LogicalLine line;
  line.text = std::string(text);
  line.first_line = where.line;
  int column = where.line == 0 ? 0 : where.column - 1;
  for (char c : text) {
    if (!IsContinuationByte(static_cast<unsigned char>(c))) ++column;
    line.pos.push_back({where.line, where.line == 0 ? 0 : column});
  }
  line.pos.push_back({where.line, where.line == 0 ? 0 : column + 1});
  return line;
}

Span Scanner::SpanOf(std::size_t begin, std::size_t end) const {
  if (begin > line_.text.size()) begin = line_.text.size();
  if (end < begin) end = begin;
  if (end > line_.text.size()) end = line_.text.size();
  const Position& p = line_.pos[begin];
  int length = CountChars(Text(begin, end));
  // A token continued over a '\' line break is underlined on its first line only.
  if (end > begin && line_.pos[end - 1].line != p.line) {
    length = 1;
    for (std::size_t i = begin; i < end && line_.pos[i].line == p.line; ++i) {
      length = line_.pos[i].column - p.column + 1;
    }
  }
  return Span{p.line, p.column, length < 1 ? 1 : length};
}

void Scanner::SkipBlanks() {
  while (offset_ < line_.text.size() && IsBlank(line_.text[offset_])) ++offset_;
}

Token Scanner::Make(Tok kind, std::size_t begin, std::size_t end) {
  offset_ = end;
  Token t;
  t.kind = kind;
  t.begin = begin;
  t.end = end;
  t.text = Text(begin, end);
  return t;
}

bool Scanner::AtEnd() {
  SkipBlanks();
  return offset_ >= line_.text.size();
}

Token Scanner::NextWord() {
  SkipBlanks();
  const std::string& s = line_.text;
  const std::size_t b = offset_;
  if (b >= s.size()) return Make(Tok::kEnd, b, b);
  const char c = s[b];
  if (c == '"') {
    const std::size_t close = s.find('"', b + 1);
    if (close == std::string::npos) {
      Token t = Make(Tok::kError, b, s.size());
      t.error = "unclosed string; expected '\"' before the end of the line";
      return t;
    }
    Token t = Make(Tok::kString, b, close + 1);
    t.text = Text(b + 1, close);
    return t;
  }
  if (c == '(') return Make(Tok::kLParen, b, b + 1);
  if (c == ')') return Make(Tok::kRParen, b, b + 1);
  if (c == '=') return Make(Tok::kEquals, b, b + 1);
  if (c == '-' && b + 1 < s.size() && s[b + 1] == '>') return Make(Tok::kArrow, b, b + 2);
  std::size_t e = b;
  while (e < s.size()) {
    const char d = s[e];
    if (IsBlank(d) || d == '(' || d == ')' || d == '=' || d == '"') break;
    if (d == '-' && e + 1 < s.size() && s[e + 1] == '>') break;
    ++e;
  }
  return Make(Tok::kWord, b, e);
}

Token Scanner::NextExpr() {
  SkipBlanks();
  const std::string& s = line_.text;
  const std::size_t b = offset_;
  if (b >= s.size()) return Make(Tok::kEnd, b, b);
  const char c = s[b];
  if (IsDigit(c) || (c == '.' && b + 1 < s.size() && IsDigit(s[b + 1]))) {
    std::size_t e = b;
    while (e < s.size()) {
      const char d = s[e];
      const auto u = static_cast<unsigned char>(d);
      if (IsDigit(d) || IsLetter(d) || d == '.' || d == '%' || u >= 0x80) {
        ++e;
      } else if ((d == '+' || d == '-') && e > b && (s[e - 1] == 'e' || s[e - 1] == 'E') &&
                 e >= b + 2 && (IsDigit(s[e - 2]) || s[e - 2] == '.') && e + 1 < s.size() &&
                 IsDigit(s[e + 1])) {
        ++e;  // the sign of an exponent: 1e-3
      } else {
        break;
      }
    }
    return Make(Tok::kNumber, b, e);
  }
  if (IsLetter(c)) {
    std::size_t e = b;
    while (e < s.size() && (IsLetter(s[e]) || IsDigit(s[e]))) ++e;
    while (e + 1 < s.size() && s[e] == '.' && IsLetter(s[e + 1])) {
      ++e;
      while (e < s.size() && (IsLetter(s[e]) || IsDigit(s[e]))) ++e;
    }
    return Make(Tok::kName, b, e);
  }
  if (c == '+' || c == '-' || c == '*' || c == '/' || c == '^' || c == ',') {
    return Make(Tok::kOp, b, b + 1);
  }
  if (c == '(') return Make(Tok::kLParen, b, b + 1);
  if (c == ')') return Make(Tok::kRParen, b, b + 1);
  if (c == '=') return Make(Tok::kEquals, b, b + 1);
  std::size_t e = b + 1;
  while (e < s.size() && IsContinuationByte(static_cast<unsigned char>(s[e]))) ++e;
  Token t = Make(Tok::kError, b, e);
  if (c == '"') {
    t.error = "a string is not allowed in an expression";
  } else {
    t.error = fmt::format("unexpected character '{}' in an expression", t.text);
  }
  return t;
}

Token Scanner::PeekWord() {
  const std::size_t saved = offset_;
  Token t = NextWord();
  offset_ = saved;
  return t;
}

Token Scanner::PeekExpr() {
  const std::size_t saved = offset_;
  Token t = NextExpr();
  offset_ = saved;
  return t;
}

}  // namespace knee
