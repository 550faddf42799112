// ExpandRange: A..B:STEP, A..B:decN, A..B:Npts and V1,V2,... lists.
#include "ranges.h"

#include <fmt/format.h>

#include <cmath>

#include "expr.h"
#include "lexer.h"

namespace knee {
namespace {

// Relative tolerance for "B lies on the grid of A and STEP": far above the rounding
// error of (B - A) / STEP, far below one step (common practice, no source).
constexpr double kGridTolerance = 1e-9;

class RangeParser {
 public:
  RangeParser(std::string_view text, const SourceLocation& where, const ValuePlace& place)
      : text_(text),
        file_(where.file),
        line_(SyntheticLine(text, ToSpan(where))),
        scanner_(line_),
        place_(place) {}

  Result<std::vector<double>> Run(bool* logarithmic) {
    *logarithmic = false;
    if (text_.empty()) return Fail(0, 0, "expected a range but found nothing");
    const std::size_t dots = text_.find("..");
    if (dots == std::string_view::npos) return List();
    const std::size_t colon = text_.find(':', dots + 2);
    double a = 0, b = 0;
    if (!Number(0, dots, "the start of the range before '..'", &a)) return errors_;
    if (colon == std::string_view::npos) {
      return Fail(text_.size(), text_.size(),
                  fmt::format("range '{}' needs ':' and a step after the end point", text_),
                  "write A..B:STEP, A..B:decN or A..B:Npts");
    }
    if (!Number(dots + 2, colon, "the end of the range after '..'", &b)) return errors_;
    const std::size_t spec = colon + 1;
    const std::string_view s = text_.substr(spec);
    if (s.substr(0, 3) == "dec") {
      long long n = 0;
      if (!Count(spec + 3, text_.size(), "points per decade after 'dec'", &n)) return errors_;
      *logarithmic = true;
      return Log(a, b, n, dots, colon, spec);
    }
    if (s.size() > 3 && s.substr(s.size() - 3) == "pts") {
      long long n = 0;
      if (!Count(spec, text_.size() - 3, "number of points before 'pts'", &n)) return errors_;
      return Points(a, b, n, spec);
    }
    double step = 0;
    if (!Number(spec, text_.size(), "a step after ':'", &step)) return errors_;
    return Linear(a, b, step, spec);
  }

 private:
  std::vector<Diagnostic> Fail(std::size_t begin, std::size_t end, std::string message,
                               std::string hint = "") {
    errors_.push_back(
        MakeError(file_, scanner_.SpanOf(begin, end), std::move(message), std::move(hint)));
    return errors_;
  }

  bool Number(std::size_t begin, std::size_t end, const char* what, double* value) {
    const std::string_view t = text_.substr(begin, end - begin);
    if (t.empty()) {
      Fail(begin, begin, fmt::format("expected a number as {}", what));
      return false;
    }
    NumberLiteral literal;
    NumberError error;
    if (!ParseNumber(t, &literal, &error)) {
      Fail(begin + error.offset, begin + error.offset + error.length, error.message, error.hint);
      return false;
    }
    std::string message, hint;
    if (!ApplyPlace(literal, t, place_, value, &message, &hint)) {
      Fail(begin + literal.unit_offset, end, message, hint);
      return false;
    }
    return true;
  }

  bool Count(std::size_t begin, std::size_t end, const char* what, long long* n) {
    const std::string_view t = text_.substr(begin, end - begin);
    bool digits = !t.empty() && t.size() <= 9;
    for (char c : t) digits = digits && c >= '0' && c <= '9';
    if (!digits) {
      Fail(begin, std::max(end, begin + 1), fmt::format("expected a whole number as the {}", what));
      return false;
    }
    *n = std::stoll(std::string(t));
    return true;
  }

  Result<std::vector<double>> TooMany(double count, std::size_t spec) {
    return Fail(spec, text_.size(),
                fmt::format("range '{}' has {:.0f} points; the limit is {:.0f}", text_, count,
                            kMaxSweepPoints));
  }

  // The point i of k intervals from a to b. When a and b are decimals with at most 12
  // fractional digits (as they are typed), the point is computed as one division of
  // exact integers, so it is the double nearest its decimal value (0 comes out as 0, not
  // 3e-18; 0.1 as 0.1). Otherwise a + (b - a) * i / k.
  static double GridPoint(double a, double b, double i, double k) {
    constexpr double kExactInteger = 9007199254740992.0;  // 2^53
    double scale = 1;
    for (int digits = 0; digits <= 12; ++digits, scale *= 10) {
      const double as = std::round(a * scale);
      const double bs = std::round(b * scale);
      if (std::fabs(as) * k > kExactInteger || std::fabs(bs) * k > kExactInteger) break;
      if (as / scale != a || bs / scale != b) continue;
      return (as * (k - i) + bs * i) / (k * scale);
    }
    return a + (b - a) * i / k;
  }

  Result<std::vector<double>> Linear(double a, double b, double step, std::size_t spec) {
    if (step == 0) return Fail(spec, text_.size(), "the step of a range must not be zero");
    if (a == b) return std::vector<double>{a};
    // The step's sign follows A -> B; only its size is taken from the text.
    const double size = std::fabs(step);
    const double n = std::fabs(b - a) / size;
    if (!(n + 1 <= kMaxSweepPoints)) return TooMany(n + 1, spec);
    const double k = std::round(n);
    std::vector<double> points;
    if (k >= 1 && std::fabs(n - k) <= kGridTolerance * std::max(1.0, n)) {
      // B is on the grid: A + (B - A) * i / k hits B exactly and spaces the points
      // evenly without accumulating the rounding error of STEP.
      const auto count = static_cast<std::size_t>(k);
      points.reserve(count + 1);
      for (std::size_t i = 0; i < count; ++i) {
        points.push_back(GridPoint(a, b, static_cast<double>(i), k));
      }
      points.push_back(b);
    } else {
      const auto count = static_cast<std::size_t>(std::floor(n)) + 1;
      const double signed_step = b > a ? size : -size;
      points.reserve(count);
      for (std::size_t i = 0; i < count; ++i) {
        points.push_back(a + signed_step * static_cast<double>(i));
      }
    }
    return points;
  }

  Result<std::vector<double>> Log(double a, double b, long long per_decade, std::size_t dots,
                                  std::size_t colon, std::size_t spec) {
    if (per_decade < 1) {
      return Fail(spec + 3, text_.size(), "a logarithmic range needs at least 1 point per decade");
    }
    if (a == 0) {
      return Fail(0, dots, "a logarithmic range cannot start at zero",
                  "start just above zero, e.g. 1n..1:dec10");
    }
    if (b == 0) {
      return Fail(dots + 2, colon, "a logarithmic range cannot end at zero",
                  "end just short of zero, e.g. 1..1n:dec10");
    }
    if ((a < 0) != (b < 0)) {
      return Fail(dots + 2, colon,
                  "a logarithmic range needs both ends of the same sign; it cannot cross zero");
    }
    if (a == b) return std::vector<double>{a};
    const double decades = std::log10(b / a);  // b / a > 0
    const double steps = std::fabs(decades) * static_cast<double>(per_decade);
    if (!(steps + 1 <= kMaxSweepPoints)) return TooMany(steps + 1, spec);
    const double k = std::round(steps);
    const bool on_grid = k >= 1 && std::fabs(steps - k) <= kGridTolerance * std::max(1.0, steps);
    const auto count = static_cast<std::size_t>(on_grid ? k : std::floor(steps)) + 1;
    const double direction = decades > 0 ? 1.0 : -1.0;
    std::vector<double> points;
    points.reserve(count);
    for (std::size_t i = 0; i < count; ++i) {
      const double exponent = direction * static_cast<double>(i) / static_cast<double>(per_decade);
      points.push_back(a * std::pow(10.0, exponent));
    }
    if (on_grid) points.back() = b;
    return points;
  }

  Result<std::vector<double>> Points(double a, double b, long long n, std::size_t spec) {
    if (n < 1) return Fail(spec, text_.size() - 3, "a range needs at least 1 point");
    if (static_cast<double>(n) > kMaxSweepPoints) {
      return TooMany(static_cast<double>(n), spec);
    }
    if (n == 1) {
      if (a != b) {
        return Fail(spec, text_.size(), "a range of 1 point needs equal ends (A..A:1pts)",
                    "use 2pts or more to include both ends");
      }
      return std::vector<double>{a};
    }
    std::vector<double> points;
    const auto count = static_cast<std::size_t>(n);
    points.reserve(count);
    const double intervals = static_cast<double>(n - 1);
    for (std::size_t i = 0; i + 1 < count; ++i) {
      points.push_back(GridPoint(a, b, static_cast<double>(i), intervals));
    }
    points.push_back(b);
    return points;
  }

  Result<std::vector<double>> List() {
    std::vector<double> values;
    std::size_t begin = 0;
    while (true) {
      std::size_t comma = text_.find(',', begin);
      const std::size_t end = comma == std::string_view::npos ? text_.size() : comma;
      double v = 0;
      if (end == begin) {
        return Fail(begin, begin, "expected a number in the list but found nothing",
                    "write V1,V2,... without blanks or empty items");
      }
      if (!Number(begin, end, "a value of the list", &v)) return errors_;
      values.push_back(v);
      if (comma == std::string_view::npos) break;
      begin = comma + 1;
    }
    return values;
  }

  std::string_view text_;
  std::string file_;
  LogicalLine line_;
  Scanner scanner_;
  ValuePlace place_;
  std::vector<Diagnostic> errors_;
};

}  // namespace

Result<std::vector<double>> ExpandRangeIn(std::string_view text, const SourceLocation& where,
                                          const ValuePlace& place, bool* logarithmic) {
  bool log = false;
  RangeParser parser(text, where, place);
  auto result = parser.Run(&log);
  if (logarithmic) *logarithmic = log;
  return result;
}

Result<std::vector<double>> ExpandRange(std::string_view text, const SourceLocation& where,
                                        bool* logarithmic) {
  return ExpandRangeIn(text, where, ValuePlace{"a range", "*"}, logarithmic);
}

}  // namespace knee
