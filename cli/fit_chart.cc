// The `knee fit --plot` chart (docs/fit.md, "Chart"): the points and the fitted curve on a
// logarithmic current axis, one panel for forward and one for reverse points, and a panel
// of each point's current error.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "eng_format.h"
#include "fit_command.h"
#include "report_common.h"
#include "svg_chart.h"

namespace knee::cli {
namespace {

constexpr int kWidth = 960, kLeft = 86, kRight = 200, kTop = 62, kPanel = 280, kGap = 56;

struct Panel {
  std::string label;
  int top = 0, height = kPanel;
  Axis x, y;
};

std::string Frame(const Panel& p, const std::string& x_unit, const std::string& y_unit,
                  const std::string& x_label) {
  const int left = kLeft, right = kWidth - kRight, bottom = p.top + p.height;
  std::string svg = fmt::format(
      "<g class=\"panel\">\n<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"#ffffff\" "
      "stroke=\"#c9ccd1\"/>\n",
      left, p.top, right - left, p.height);
  for (double t : p.y.Ticks()) {
    const double y = p.y.Map(t, bottom, p.top);
    svg += fmt::format(
        "<line x1=\"{}\" x2=\"{}\" y1=\"{:.1f}\" y2=\"{:.1f}\" stroke=\"#e6e8eb\"/>"
        "<text x=\"{}\" y=\"{:.1f}\" text-anchor=\"end\" fill=\"#4a5058\">{}</text>\n",
        left, right, y, y, left - 6, y + 4,
        XmlEscape(y_unit == "%" ? fmt::format("{:g} %", t) : FormatEng(t, y_unit, 3)));
  }
  for (double t : p.x.Ticks()) {
    const double x = p.x.Map(t, left, right);
    svg += fmt::format(
        "<line x1=\"{:.1f}\" x2=\"{:.1f}\" y1=\"{}\" y2=\"{}\" stroke=\"#e6e8eb\"/>"
        "<text x=\"{:.1f}\" y=\"{}\" text-anchor=\"middle\" fill=\"#4a5058\">{}</text>\n",
        x, x, p.top, bottom, x, bottom + 16, XmlEscape(FormatEng(t, x_unit, 3)));
  }
  svg += fmt::format("<text x=\"{}\" y=\"{}\" fill=\"#22262b\" font-weight=\"bold\">{}</text>\n",
                     left, p.top - 8, XmlEscape(p.label));
  svg += fmt::format("<text x=\"{}\" y=\"{}\" text-anchor=\"middle\" fill=\"#22262b\">{}</text>\n",
                     (left + right) / 2, bottom + 34, XmlEscape(x_label));
  return svg;
}

}  // namespace

std::string DrawFitChart(const FitReport& r) {
  const FitResult& f = r.result;
  const int left = kLeft, right = kWidth - kRight;
  struct Side {
    const char* label;
    bool forward;
  };
  std::vector<Side> sides;
  for (bool forward : {true, false}) {
    const bool any = std::any_of(f.points.begin(), f.points.end(), [&](const FittedPoint& p) {
      return (p.measured.v > 0) == forward;
    });
    if (any)
      sides.push_back({forward ? "forward: v against |i|" : "reverse: |v| against |i|", forward});
  }
  const int panels = static_cast<int>(sides.size()) + 1;
  const int height = kTop + panels * (kPanel + kGap) + 20;
  std::string svg = fmt::format(
      "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0}\" height=\"{1}\" "
      "viewBox=\"0 0 {0} {1}\" font-family=\"Helvetica, Arial, sans-serif\" font-size=\"12\">\n"
      "<rect width=\"100%\" height=\"100%\" fill=\"#fbfbf8\"/>\n",
      kWidth, height);
  svg += fmt::format(
      "<text x=\"{}\" y=\"26\" font-size=\"16\" font-weight=\"bold\" fill=\"#22262b\">{}</text>\n",
      left, XmlEscape("fit of " + r.file + ": points and fitted curve"));
  auto colour_of = [&](double temp) {
    const auto at = std::find(r.temperatures.begin(), r.temperatures.end(), temp);
    return ChartColour(static_cast<std::size_t>(at - r.temperatures.begin()));
  };
  double i_lo = INFINITY, i_hi = 0;
  for (const FittedPoint& p : f.points) {
    i_lo = std::min(i_lo, std::fabs(p.measured.i));
    i_hi = std::max(i_hi, std::fabs(p.measured.i));
  }
  const Axis x_all = FitAxis(i_lo, i_hi, true);
  for (std::size_t s = 0; s < sides.size(); ++s) {
    Panel panel;
    panel.label = sides[s].label;
    panel.top = kTop + static_cast<int>(s) * (kPanel + kGap);
    double lo = INFINITY, hi = -INFINITY, a_lo = INFINITY, a_hi = 0;
    for (const FittedPoint& p : f.points) {
      if ((p.measured.v > 0) != sides[s].forward) continue;
      lo = std::min(lo, std::fabs(p.measured.v));
      hi = std::max(hi, std::fabs(p.measured.v));
      a_lo = std::min(a_lo, std::fabs(p.measured.i));
      a_hi = std::max(a_hi, std::fabs(p.measured.i));
    }
    panel.x = FitAxis(a_lo, a_hi, true);
    panel.y = FitAxis(lo - 0.05 * (hi - lo), hi + 0.05 * (hi - lo), false);
    svg += Frame(panel, "A", "V", "|i| [A], logarithmic");
    const int bottom = panel.top + panel.height;
    svg += fmt::format(
        "<clipPath id=\"fitclip{0}\"><rect x=\"{1}\" y=\"{2}\" width=\"{3}\" height=\"{4}\"/>"
        "</clipPath>\n",
        s, left, panel.top, right - left, panel.height);
    for (double temp : r.temperatures) {
      std::string d;
      constexpr int kSteps = 160;
      for (int k = 0; k <= kSteps; ++k) {
        const double lx =
            std::log10(panel.x.lo) + (std::log10(panel.x.hi) - std::log10(panel.x.lo)) * k / kSteps;
        const double i = std::pow(10.0, lx) * (sides[s].forward ? 1 : -1);
        const double v = ModelVoltage(f.model, i, temp);
        if (!std::isfinite(v)) continue;
        d += fmt::format("{}{:.2f},{:.2f}", d.empty() ? "M" : " L",
                         panel.x.Map(std::fabs(i), left, right),
                         panel.y.Map(std::fabs(v), bottom, panel.top));
      }
      if (!d.empty()) {
        svg += fmt::format(
            "<path class=\"curve\" d=\"{}\" fill=\"none\" stroke=\"{}\" stroke-width=\"1.8\" "
            "clip-path=\"url(#fitclip{})\"/>\n",
            d, colour_of(temp), s);
      }
    }
    for (const FittedPoint& p : f.points) {
      if ((p.measured.v > 0) != sides[s].forward) continue;
      svg += fmt::format(
          "<circle class=\"point\" cx=\"{:.2f}\" cy=\"{:.2f}\" r=\"3.5\" fill=\"none\" "
          "stroke=\"{}\" stroke-width=\"1.5\"/>\n",
          panel.x.Map(std::fabs(p.measured.i), left, right),
          panel.y.Map(std::fabs(p.measured.v), bottom, panel.top), colour_of(p.measured.temp));
    }
    svg += "</g>\n";
  }
  // The residual panel: each point's current error, model against measured, in %.
  Panel res;
  res.label = "error of the model's current at each measured voltage [%]";
  res.top = kTop + static_cast<int>(sides.size()) * (kPanel + kGap);
  double e_max = 0;
  for (const FittedPoint& p : f.points) {
    const double e = (p.i_model / p.measured.i - 1) * 100;
    if (std::isfinite(e)) e_max = std::max(e_max, std::fabs(e));
  }
  if (!(e_max > 0)) e_max = 1e-6;
  res.x = x_all;
  res.y = FitAxis(-e_max * 1.1, e_max * 1.1, false);
  svg += Frame(res, "A", "%", "|i| [A], logarithmic");
  const int bottom = res.top + res.height;
  const double y0 = res.y.Map(0, bottom, res.top);
  svg += fmt::format("<line x1=\"{}\" x2=\"{}\" y1=\"{:.1f}\" y2=\"{:.1f}\" stroke=\"#9aa0a8\"/>\n",
                     left, right, y0, y0);
  for (const FittedPoint& p : f.points) {
    const double e = (p.i_model / p.measured.i - 1) * 100;
    if (!std::isfinite(e)) continue;
    const double x = res.x.Map(std::fabs(p.measured.i), left, right);
    svg += fmt::format(
        "<line x1=\"{0:.2f}\" x2=\"{0:.2f}\" y1=\"{1:.2f}\" y2=\"{2:.2f}\" stroke=\"{3}\"/>"
        "<circle class=\"residual\" cx=\"{0:.2f}\" cy=\"{2:.2f}\" r=\"3\" fill=\"{3}\"/>\n",
        x, y0, res.y.Map(e, bottom, res.top), colour_of(p.measured.temp));
  }
  svg += "</g>\n";
  // Legend: one entry per temperature.
  for (std::size_t t = 0; t < r.temperatures.size(); ++t) {
    const int ly = kTop + 14 + static_cast<int>(t) * 18;
    svg += fmt::format(
        "<line x1=\"{}\" x2=\"{}\" y1=\"{}\" y2=\"{}\" stroke=\"{}\" stroke-width=\"2.5\"/>"
        "<text x=\"{}\" y=\"{}\" fill=\"#22262b\">{}</text>\n",
        right + 12, right + 32, ly, ly, ChartColour(t), right + 38, ly + 4,
        XmlEscape(FormatEng(r.temperatures[t], "°C", 4)));
  }
  svg += fmt::format(
      "<text x=\"{}\" y=\"{}\" fill=\"#4a5058\">circles: points</text>\n"
      "<text x=\"{}\" y=\"{}\" fill=\"#4a5058\">lines: fitted part</text>\n",
      right + 12, kTop + 24 + static_cast<int>(r.temperatures.size()) * 18, right + 12,
      kTop + 42 + static_cast<int>(r.temperatures.size()) * 18);
  svg += "</svg>\n";
  return svg;
}

}  // namespace knee::cli
