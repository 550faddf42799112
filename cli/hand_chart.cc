// The `knee hand --plot` chart: grouped bars, one group per diode, one bar per model,
// each bar the diode's current under that model (docs/hand-models.md, "Chart").
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "eng_format.h"
#include "report_common.h"
#include "report_hand.h"

namespace knee::cli {
namespace {

// Exact in a dark slate, the simplified models in three hues that stay apart in grey.
constexpr const char* kBarColours[] = {"#2f3b4c", "#3d7cc9", "#e08a2c", "#4aa36c", "#a0529c"};

// A step of 1, 2 or 5 times a power of ten giving about `count` intervals over `span`.
double NiceStep(double span, int count) {
  const double raw = span / count;
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  for (double m : {1.0, 2.0, 5.0, 10.0}) {
    if (m * power >= raw) return m * power;
  }
  return 10 * power;
}

}  // namespace

std::string DrawHandChart(const HandReport& r) {
  const size_t models = r.models.size();
  const size_t groups = r.diodes.size();
  double lo = 0, hi = 0;
  for (const HandDiodeRow& d : r.diodes) {
    for (size_t m = 0; m < models; ++m) {
      if (!r.models[m].has_answer || !std::isfinite(d.i[m])) continue;
      lo = std::min(lo, d.i[m]);
      hi = std::max(hi, d.i[m]);
    }
  }
  // Leakage-sized bars would add a whole empty step below or above zero: clip them.
  if (-lo < 0.02 * hi) lo = 0;
  if (hi < 0.02 * -lo) hi = 0;
  if (hi - lo <= 0) hi = lo + 1e-3;
  const double step = NiceStep(hi - lo, 6);
  lo = std::floor(lo / step - 1e-9) * step;
  hi = std::ceil(hi / step + 1e-9) * step;

  const int bar = 22, gap = 34, left = 92, top = 56, plot_h = 300;
  const int group_w = static_cast<int>(models) * bar + gap;
  const int plot_w = std::max(240, static_cast<int>(groups) * group_w + gap);
  const int legend_w = 190;
  const int width = left + plot_w + legend_w;
  const int height = top + plot_h + 64;
  auto y_of = [&](double v) { return top + plot_h * (hi - v) / (hi - lo); };

  std::string svg = fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0}\" height=\"{1}\" "
      "viewBox=\"0 0 {0} {1}\" font-family=\"sans-serif\" font-size=\"12\">\n"
      "<rect width=\"100%\" height=\"100%\" fill=\"#fbfaf7\"/>\n",
      width, height);
  const std::string title = r.title.empty() ? r.file : r.title;
  svg += fmt::format(
      "<text x=\"{}\" y=\"24\" font-size=\"15\" font-weight=\"bold\" fill=\"#222\">{}</text>\n",
      left, XmlEscape(title));
  svg += fmt::format(
      "<text x=\"{}\" y=\"42\" fill=\"#555\">diode current under each model at {}</text>\n", left,
      XmlEscape(FormatEng(r.temp, "°C", 4)));
  // Grid and current axis.
  for (double v = lo; v <= hi + step * 1e-6; v += step) {
    const double y = y_of(std::fabs(v) < step * 1e-9 ? 0.0 : v);
    svg +=
        fmt::format("<line x1=\"{}\" x2=\"{}\" y1=\"{:.1f}\" y2=\"{:.1f}\" stroke=\"#e2ded6\"/>\n",
                    left, left + plot_w, y, y);
    svg += fmt::format("<text x=\"{}\" y=\"{:.1f}\" text-anchor=\"end\" fill=\"#444\">{}</text>\n",
                       left - 8, y + 4,
                       XmlEscape(FormatEng(std::fabs(v) < step * 1e-9 ? 0.0 : v, "A", 3)));
  }
  svg += fmt::format(
      "<line x1=\"{0}\" x2=\"{1}\" y1=\"{2:.1f}\" y2=\"{2:.1f}\" stroke=\"#555\" "
      "stroke-width=\"1.2\"/>\n",
      left, left + plot_w, y_of(0.0));
  svg += fmt::format("<line x1=\"{0}\" x2=\"{0}\" y1=\"{1}\" y2=\"{2}\" stroke=\"#555\"/>\n", left,
                     top, top + plot_h);
  // Bars.
  for (size_t g = 0; g < groups; ++g) {
    const HandDiodeRow& d = r.diodes[g];
    const int x0 = left + gap + static_cast<int>(g) * group_w;
    for (size_t m = 0; m < models; ++m) {
      if (!r.models[m].has_answer || !std::isfinite(d.i[m])) continue;
      const double y0 = y_of(0.0), y1 = y_of(d.i[m]);
      const double y = std::min(y0, y1);
      const double h = std::max(std::fabs(y1 - y0), 0.8);
      svg += fmt::format(
          "<rect x=\"{}\" y=\"{:.1f}\" width=\"{}\" height=\"{:.1f}\" fill=\"{}\">"
          "<title>{} {}: {} ({})</title></rect>\n",
          x0 + static_cast<int>(m) * bar, y, bar - 3, h, kBarColours[m % 5], XmlEscape(d.name),
          XmlEscape(r.models[m].name), XmlEscape(FormatEng(d.i[m], "A")), XmlEscape(d.state[m]));
    }
    svg +=
        fmt::format("<text x=\"{}\" y=\"{}\" text-anchor=\"middle\" fill=\"#222\">{}</text>\n",
                    x0 + static_cast<int>(models) * bar / 2, top + plot_h + 20, XmlEscape(d.name));
  }
  // Legend.
  const int lx = left + plot_w + 24;
  for (size_t m = 0; m < models; ++m) {
    const int ly = top + 8 + static_cast<int>(m) * 22;
    svg += fmt::format(
        "<rect x=\"{}\" y=\"{}\" width=\"14\" height=\"14\" fill=\"{}\"/>\n"
        "<text x=\"{}\" y=\"{}\" fill=\"#222\">{}{}</text>\n",
        lx, ly, kBarColours[m % 5], lx + 20, ly + 11, XmlEscape(r.models[m].name),
        r.models[m].has_answer ? "" : " (no answer)");
  }
  svg += "</svg>\n";
  return svg;
}

}  // namespace knee::cli
