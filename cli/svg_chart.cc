#include "svg_chart.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>

#include "eng_format.h"
#include "report_common.h"

namespace knee::cli {
namespace {

// Our palette: strong, distinguishable hues that survive grey-scale printing in order.
constexpr const char* kColours[] = {"#1f5fa6", "#c8452c", "#2a8c5a", "#8a4fb0",
                                    "#d08a12", "#2394a8", "#7a5230", "#b8336a"};
}  // namespace

const char* ChartColour(std::size_t index) { return kColours[index % std::size(kColours)]; }

namespace {
constexpr int kLeft = 86;
constexpr int kRight = 220;  // room for the legend
constexpr int kTop = 62;
constexpr int kGap = 46;

// The shared x axis over the inner values [lo, hi] (the finite ones; > 0 on a log axis).
Axis XAxis(double lo, double hi, bool log) {
  if (!(hi > lo)) return FitAxis(lo, hi, log);
  Axis axis;
  axis.log = log;
  axis.lo = lo;
  axis.hi = hi;
  return axis;
}

std::string PanelLabel(const std::string& unit, bool log_y) {
  if (log_y) return "|current| [A], logarithmic";
  if (unit == "V") return "voltage [V]";
  if (unit == "A") return "current [A]";
  if (unit == "W") return "power [W]";
  if (unit == "Ohm") return "resistance [Ω]";
  if (unit.empty()) return "(no unit)";
  return "[" + DisplayUnit(unit) + "]";
}

struct Trace {
  size_t column;
  std::string label;
  std::vector<std::pair<double, double>> points;  // NaN y breaks the line
};

// Shaded bands over the inner-axis values where some diode exceeds a rating.
std::string OverRatingBands(const Report& report, const Axis& x_axis, int left, int right, int top,
                            int height) {
  if (report.row_over_rating.empty()) return "";
  std::map<double, bool> over;  // inner value -> exceeded at any outer value
  for (size_t r = 0; r < report.rows.size(); ++r) {
    const double x = report.rows[r][0];
    if (!std::isfinite(x) || (x_axis.log && x <= 0)) continue;
    over[x] = over[x] || report.row_over_rating[r];
  }
  std::vector<std::pair<double, bool>> xs(over.begin(), over.end());
  std::string svg;
  for (size_t i = 0; i < xs.size(); ++i) {
    if (!xs[i].second) continue;
    size_t j = i;
    while (j + 1 < xs.size() && xs[j + 1].second) ++j;
    auto pixel = [&](double v) { return x_axis.Map(v, left, right); };
    const double x0 =
        i == 0 ? pixel(xs[i].first) : (pixel(xs[i - 1].first) + pixel(xs[i].first)) / 2;
    const double x1 =
        j + 1 == xs.size() ? pixel(xs[j].first) : (pixel(xs[j].first) + pixel(xs[j + 1].first)) / 2;
    svg += fmt::format(
        "<rect class=\"over-rating\" x=\"{:.1f}\" y=\"{}\" width=\"{:.1f}\" "
        "height=\"{}\" fill=\"#c8452c\" fill-opacity=\"0.12\"/>\n",
        std::max<double>(x0, left), top,
        std::max(1.0, std::min<double>(x1, right) - std::max<double>(x0, left)), height);
    i = j;
  }
  if (!svg.empty()) {
    svg += fmt::format(
        "<text x=\"{}\" y=\"{}\" text-anchor=\"end\" fill=\"#c8452c\">shaded: a rating "
        "is exceeded</text>\n",
        right - 4, top + height - 6);
  }
  return svg;
}

// Writes a trace's path data, one pixel column at a time: of the points that fall in the
// same column only the first, the lowest, the highest and the last are kept, in their
// order. The line drawn is the same at the chart's resolution, and a path of millions of
// points stays at most four points per pixel column long (docs/sweeps.md, "Charts").
class ThinPath {
 public:
  explicit ThinPath(std::string* d) : d_(d) {}
  ~ThinPath() { Flush(); }
  void Add(double x, double y) {
    const double column = std::floor(x);
    if (count_ > 0 && column != column_) Flush();
    const Point p{x, y, count_};
    if (count_ == 0) {
      column_ = column;
      first_ = lo_ = hi_ = p;
    } else {
      if (y < lo_.y) lo_ = p;
      if (y > hi_.y) hi_ = p;
    }
    last_ = p;
    ++count_;
  }
  // A gap in the line (a failed point or one off a logarithmic axis).
  void Break() {
    Flush();
    pen_down_ = false;
  }

 private:
  struct Point {
    double x = 0, y = 0;
    long long index = 0;  // order within the column
  };
  void Flush() {
    if (count_ == 0) return;
    const Point& early = lo_.index <= hi_.index ? lo_ : hi_;
    const Point& late = lo_.index <= hi_.index ? hi_ : lo_;
    long long written = -1;
    for (const Point* p : std::initializer_list<const Point*>{&first_, &early, &late, &last_}) {
      if (p->index == written) continue;
      *d_ +=
          fmt::format("{}{:.2f},{:.2f}", pen_down_ ? " L" : (d_->empty() ? "M" : " M"), p->x, p->y);
      pen_down_ = true;
      written = p->index;
    }
    count_ = 0;
  }

  std::string* d_;
  bool pen_down_ = false;
  long long count_ = 0;
  double column_ = 0;
  Point first_, lo_, hi_, last_;
};

}  // namespace

double Axis::Map(double v, double pixel_lo, double pixel_hi) const {
  double a = log ? std::log10(v) : v;
  double l = log ? std::log10(lo) : lo;
  double h = log ? std::log10(hi) : hi;
  return pixel_lo + (a - l) / (h - l) * (pixel_hi - pixel_lo);
}

std::vector<double> Axis::Ticks() const {
  if (!log) return LinearTicks(lo, hi, 6);
  std::vector<double> ticks;
  int first = static_cast<int>(std::ceil(std::log10(lo) - 1e-9));
  int last = static_cast<int>(std::floor(std::log10(hi) + 1e-9));
  int stride = std::max(1, (last - first + 1) / 8);
  for (int e = first; e <= last; e += stride) ticks.push_back(std::pow(10.0, e));
  return ticks;
}

Axis FitAxis(double lo, double hi, bool log) {
  Axis axis;
  axis.log = log;
  if (!(lo <= hi)) {  // no finite data
    lo = log ? 1e-12 : 0;
    hi = log ? 1 : 1;
  }
  if (log) {
    axis.lo = std::pow(10.0, std::floor(std::log10(lo)));
    axis.hi = std::pow(10.0, std::ceil(std::log10(hi)));
    if (axis.hi <= axis.lo) axis.hi = axis.lo * 10;
    return axis;
  }
  if (hi == lo) {
    const double pad = lo == 0 ? 1 : std::fabs(lo) * 0.1;
    lo -= pad;
    hi += pad;
  }
  std::vector<double> ticks = LinearTicks(lo, hi, 6);
  const double step = ticks.size() > 1 ? ticks[1] - ticks[0] : (hi - lo);
  axis.lo = std::floor(lo / step + 1e-9) * step;
  axis.hi = std::ceil(hi / step - 1e-9) * step;
  return axis;
}

std::vector<double> LinearTicks(double lo, double hi, int target) {
  std::vector<double> ticks;
  if (!(hi > lo)) return {lo};
  const double raw = (hi - lo) / target;
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  double step = power;
  for (double m : {1.0, 2.0, 5.0, 10.0}) {
    step = m * power;
    if (step >= raw) break;
  }
  for (double t = std::ceil(lo / step - 1e-9) * step; t <= hi + step * 1e-9; t += step) {
    ticks.push_back(std::fabs(t) < step * 1e-9 ? 0.0 : t);
  }
  return ticks;
}

std::string DrawSweepChart(const Report& report, const ChartOptions& options) {
  const size_t axes = static_cast<size_t>(std::max(report.sweep_axes, 1));
  const Column& x_column = report.columns.front();

  // Panels by unit, in column order of first appearance.
  std::vector<std::string> units;
  std::map<std::string, std::vector<size_t>> columns_of_unit;
  for (size_t c = axes; c < SharedColumns(report); ++c) {
    const std::string& unit = report.columns[c].unit;
    if (!columns_of_unit.count(unit)) units.push_back(unit);
    columns_of_unit[unit].push_back(c);
  }

  // One trace per quantity and per combination of outer values (rows come inner-fastest).
  std::map<std::string, std::vector<Trace>> traces_of_unit;
  for (const std::string& unit : units) {
    for (size_t c : columns_of_unit[unit]) {
      std::map<std::vector<double>, size_t> trace_of_outer;
      std::vector<Trace>& traces = traces_of_unit[unit];
      for (const auto& row : report.rows) {
        std::vector<double> outer(row.begin() + 1, row.begin() + static_cast<long>(axes));
        auto [it, fresh] = trace_of_outer.try_emplace(outer, traces.size());
        if (fresh) {
          std::string label = report.columns[c].name;
          for (size_t a = 1; a < axes; ++a) {
            label += fmt::format(", {} = {}", report.columns[a].name,
                                 FormatEng(row[a], report.columns[a].unit, 4));
          }
          traces.push_back({c, label, {}});
        }
        double y = row[c];
        const bool is_current = unit == "A";
        if (is_current && options.log_current) y = std::fabs(y);
        traces[it->second].points.emplace_back(row[0], y);
      }
    }
  }

  const int plot_width = options.width - kLeft - kRight;
  const int height = kTop + static_cast<int>(units.size()) * (options.panel_height + kGap) + 30;
  std::string svg = fmt::format(
      "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0}\" height=\"{1}\" "
      "viewBox=\"0 0 {0} {1}\" font-family=\"Helvetica, Arial, sans-serif\" font-size=\"12\">\n"
      "<rect width=\"100%\" height=\"100%\" fill=\"#fbfbf8\"/>\n",
      options.width, height);
  const std::string title = report.title.empty() ? report.file : report.title;
  svg += fmt::format(
      "<text x=\"{}\" y=\"26\" font-size=\"16\" font-weight=\"bold\" fill=\"#22262b\">{}</text>\n",
      kLeft,
      XmlEscape(title + (report.temp_swept ? std::string(": DC sweep, temperature swept")
                                           : ": DC sweep at " + FormatEng(report.temp, "°C", 4))));

  // Shared x axis.
  double x_lo = INFINITY, x_hi = -INFINITY;
  for (const auto& row : report.rows) {
    if (std::isfinite(row[0]) && (!options.log_x || row[0] > 0)) {
      x_lo = std::min(x_lo, row[0]);
      x_hi = std::max(x_hi, row[0]);
    }
  }
  const Axis x_axis = XAxis(x_lo, x_hi, options.log_x);

  for (size_t p = 0; p < units.size(); ++p) {
    const std::string& unit = units[p];
    const bool log_y = options.log_current && unit == "A";
    const int top = kTop + static_cast<int>(p) * (options.panel_height + kGap);
    const int bottom = top + options.panel_height;
    const int left = kLeft, right = kLeft + plot_width;
    double y_lo = INFINITY, y_hi = -INFINITY;
    for (const Trace& t : traces_of_unit[unit]) {
      for (auto [x, y] : t.points) {
        if (!std::isfinite(y) || (log_y && y <= 0)) continue;
        y_lo = std::min(y_lo, y);
        y_hi = std::max(y_hi, y);
      }
    }
    Axis y_axis = FitAxis(y_lo, y_hi, log_y);
    svg += fmt::format(
        "<g class=\"panel\">\n<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" "
        "fill=\"#ffffff\" stroke=\"#c9ccd1\"/>\n",
        left, top, plot_width, options.panel_height);
    for (double t : y_axis.Ticks()) {
      const double y = y_axis.Map(t, bottom, top);
      svg += fmt::format(
          "<line x1=\"{}\" x2=\"{}\" y1=\"{:.1f}\" y2=\"{:.1f}\" stroke=\"#e6e8eb\"/>"
          "<text x=\"{}\" y=\"{:.1f}\" text-anchor=\"end\" fill=\"#4a5058\">{}</text>\n",
          left, right, y, y, left - 6, y + 4, XmlEscape(FormatEng(t, unit, 3)));
    }
    for (double t : x_axis.Ticks()) {
      const double x = x_axis.Map(t, left, right);
      svg += fmt::format(
          "<line x1=\"{:.1f}\" x2=\"{:.1f}\" y1=\"{}\" y2=\"{}\" stroke=\"#e6e8eb\"/>"
          "<text x=\"{:.1f}\" y=\"{}\" text-anchor=\"middle\" fill=\"#4a5058\">{}</text>\n",
          x, x, top, bottom, x, bottom + 16, XmlEscape(FormatEng(t, x_column.unit, 3)));
    }
    if (y_axis.lo < 0 && y_axis.hi > 0 && !y_axis.log) {
      const double y0 = y_axis.Map(0, bottom, top);
      svg += fmt::format(
          "<line x1=\"{}\" x2=\"{}\" y1=\"{:.1f}\" y2=\"{:.1f}\" stroke=\"#9aa0a8\"/>\n", left,
          right, y0, y0);
    }
    svg += fmt::format("<text x=\"{}\" y=\"{}\" fill=\"#22262b\" font-weight=\"bold\">{}</text>\n",
                       left, top - 8, XmlEscape(PanelLabel(unit, log_y)));
    svg += fmt::format(
        "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\" fill=\"#22262b\">{}</text>\n",
        (left + right) / 2, bottom + 34,
        XmlEscape(x_column.name +
                  (x_column.unit.empty() ? "" : " [" + DisplayUnit(x_column.unit) + "]")));
    svg += fmt::format(
        "<clipPath id=\"clip{0}\"><rect x=\"{1}\" y=\"{2}\" width=\"{3}\" "
        "height=\"{4}\"/></clipPath>\n",
        p, left, top, plot_width, options.panel_height);
    svg += OverRatingBands(report, x_axis, left, right, top, options.panel_height);
    const std::vector<Trace>& traces = traces_of_unit[unit];
    for (size_t t = 0; t < traces.size(); ++t) {
      const char* colour = kColours[t % std::size(kColours)];
      const bool dashed = t >= std::size(kColours);
      std::string d;
      {
        ThinPath path(&d);
        for (auto [x, y] : traces[t].points) {
          if (!std::isfinite(y) || (log_y && y <= 0) || (x_axis.log && x <= 0)) {
            path.Break();
            continue;
          }
          path.Add(x_axis.Map(x, left, right), y_axis.Map(y, bottom, top));
        }
      }
      svg += fmt::format(
          "<path class=\"trace\" d=\"{}\" fill=\"none\" stroke=\"{}\" "
          "stroke-width=\"1.8\"{} clip-path=\"url(#clip{})\"/>\n",
          d.empty() ? "M0,0" : d, colour, dashed ? " stroke-dasharray=\"6 3\"" : "", p);
      const int ly = top + 14 + static_cast<int>(t) * 18;
      svg += fmt::format(
          "<line x1=\"{}\" x2=\"{}\" y1=\"{}\" y2=\"{}\" stroke=\"{}\" stroke-width=\"2.5\"/>"
          "<text x=\"{}\" y=\"{}\" fill=\"#22262b\">{}</text>\n",
          right + 12, right + 32, ly, ly, colour, right + 38, ly + 4, XmlEscape(traces[t].label));
    }
    svg += "</g>\n";
  }
  svg += "</svg>\n";
  return svg;
}

ChartSample::ChartSample(const Report& report, const ChartOptions& options, double x_lo,
                         double x_hi)
    : axes_(static_cast<size_t>(std::max(report.sweep_axes, 1))),
      charted_(SharedColumns(report)),
      log_x_(options.log_x),
      x_lo_(x_lo),
      x_hi_(x_hi),
      width_(options.width) {}

double ChartSample::PixelColumn(double x) const {
  if (!std::isfinite(x) || (log_x_ && x <= 0)) return -1;
  const Axis axis = XAxis(x_lo_, x_hi_, log_x_);
  return std::floor(axis.Map(x, kLeft, width_ - kRight));
}

bool ChartSample::SameGroup(const std::vector<double>& row, char over) const {
  if (!open_ || over != group_over_ || PixelColumn(row[0]) != group_column_) return false;
  for (size_t a = 1; a < axes_; ++a) {
    if (row[a] != group_first_.row[a]) return false;
  }
  for (size_t c = axes_; c < charted_; ++c) {
    if (std::isfinite(row[c]) != std::isfinite(group_first_.row[c])) return false;
  }
  return true;
}

void ChartSample::Add(const std::vector<std::vector<double>>& rows, const std::vector<char>& over) {
  for (size_t r = 0; r < rows.size(); ++r) {
    const std::vector<double>& row = rows[r];
    const char flag = over.empty() ? 0 : over[r];
    const Kept here{seen_++, row, flag};
    if (!SameGroup(row, flag)) {
      Flush();
      open_ = true;
      group_over_ = flag;
      group_column_ = PixelColumn(row[0]);
      group_first_ = here;
      extremes_.assign(4 * (charted_ - axes_), here);
    } else {
      // Lowest and highest of each charted value and of its magnitude (what a log
      // current axis draws), first occurrence kept.
      for (size_t c = axes_; c < charted_; ++c) {
        if (!std::isfinite(row[c])) continue;
        Kept* e = &extremes_[4 * (c - axes_)];
        if (row[c] < e[0].row[c]) e[0] = here;
        if (row[c] > e[1].row[c]) e[1] = here;
        if (std::fabs(row[c]) < std::fabs(e[2].row[c])) e[2] = here;
        if (std::fabs(row[c]) > std::fabs(e[3].row[c])) e[3] = here;
      }
    }
    group_last_ = here;
  }
}

void ChartSample::Flush() {
  if (!open_) return;
  std::vector<const Kept*> keep = {&group_first_, &group_last_};
  for (const Kept& e : extremes_) keep.push_back(&e);
  std::sort(keep.begin(), keep.end(),
            [](const Kept* a, const Kept* b) { return a->index < b->index; });
  long long written = -1;
  for (const Kept* k : keep) {
    if (k->index == written) continue;
    rows_.push_back(k->row);
    over_.push_back(k->over);
    written = k->index;
  }
  open_ = false;
}

void ChartSample::MoveInto(Report* report) {
  Flush();
  report->rows = std::move(rows_);
  report->row_over_rating = std::move(over_);
}

long long ChartSample::MostRows(long long lines, const Report& report,
                                const ChartOptions& options) {
  const auto charted = static_cast<long long>(SharedColumns(report)) -
                       static_cast<long long>(std::max(report.sweep_axes, 1));
  const long long columns = options.width - kLeft - kRight + 1;
  return lines * columns * (2 + 4 * std::max(charted, 0LL));
}

}  // namespace knee::cli
