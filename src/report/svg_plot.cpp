#include "tumbletrace/report/svg_plot.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

namespace tumbletrace {
namespace {

constexpr double kMarginLeft = 64, kMarginRight = 14, kMarginTop = 10, kMarginBottom = 44;
constexpr double kLegendRow = 16;

struct Range {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void Add(double v) {
    if (!std::isfinite(v)) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  bool Valid() const { return lo <= hi; }
  // A range of zero width is opened around its value; a little room on both sides.
  void Pad() {
    if (hi - lo <= 1e-12 * std::max(1.0, std::abs(lo))) {
      const double half = std::max(std::abs(lo) * 0.05, 1e-9);
      lo -= half;
      hi += half;
    }
    const double pad = 0.04 * (hi - lo);
    lo -= pad;
    hi += pad;
  }
};

std::string Num(double v) { return fmt::format("{:.2f}", v); }

}  // namespace

std::vector<double> NiceTicks(double lo, double hi, int target) {
  std::vector<double> ticks;
  if (!(hi > lo) || !std::isfinite(lo) || !std::isfinite(hi) || target < 1) return ticks;
  const double raw = (hi - lo) / target;
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  const double fraction = raw / power;
  const double mantissa = fraction < 1.5 ? 1 : fraction < 3.5 ? 2 : fraction < 7.5 ? 5 : 10;
  const double step = mantissa * power;
  // Tick k is k * mantissa * 10^e, computed as a quotient for e < 0 so that 0.6 is the
  // double nearest 0.6 (3 * 0.2 is not).
  const int exponent = static_cast<int>(std::lround(std::log10(power)));
  const double divisor = exponent < 0 ? std::pow(10.0, -exponent) : 1.0;
  const double multiplier = exponent < 0 ? 1.0 : power;
  for (long long k = static_cast<long long>(std::ceil(lo / step - 1e-9)); k * step <= hi + 1e-9 * step; ++k) {
    ticks.push_back(static_cast<double>(k) * mantissa * multiplier / divisor);
  }
  return ticks;
}

std::string FormatTick(double value, double step) {
  const int decimals = step > 0 ? std::max(0, static_cast<int>(-std::floor(std::log10(step) + 1e-9))) : 3;
  std::string text = fmt::format("{:.{}f}", value, decimals);
  if (text == "-0" || (text.rfind("-0.", 0) == 0 && text.find_first_not_of("-0.") == std::string::npos)) {
    text.erase(0, 1);
  }
  return text;
}

std::string EscapeXml(const std::string& text) {
  std::string out;
  for (char c : text) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&#39;"; break;
      default: out += c;
    }
  }
  return out;
}

SvgPlot::SvgPlot(std::string x_label, std::string y_label, int width_px, int height_px)
    : x_label_(std::move(x_label)), y_label_(std::move(y_label)),
      width_px_(width_px), height_px_(height_px) {}

void SvgPlot::Add(PlotSeries series) { series_.push_back(std::move(series)); }

void SvgPlot::AddBand(double x0, double x1, std::string colour, std::string label) {
  bands_.push_back({x0, x1, std::move(colour), std::move(label)});
}

void SvgPlot::AddVerticalLine(double x, std::string colour, std::string label) {
  lines_.push_back({x, std::move(colour), std::move(label)});
}

void SvgPlot::AddText(double x, double y, std::string text, std::string colour) {
  texts_.push_back({x, y, std::move(text), std::move(colour)});
}

std::string SvgPlot::Render() const {
  Range xr, yr;
  for (const PlotSeries& s : series_) {
    for (size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
      if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i])) continue;
      xr.Add(s.x[i]);
      yr.Add(s.y[i]);
      if (s.style == SeriesStyle::kBars) yr.Add(0.0);
    }
  }
  for (const Text& t : texts_) {
    xr.Add(t.x);
    yr.Add(t.y);
  }
  std::ostringstream svg;
  int legend_rows = 0;
  for (const PlotSeries& s : series_) legend_rows += s.label.empty() ? 0 : 1;
  for (const Band& b : bands_) legend_rows += b.label.empty() ? 0 : 1;
  for (const VLine& l : lines_) legend_rows += l.label.empty() ? 0 : 1;
  // The legend sits below the axes, two entries a row, or one when a label is long.
  size_t longest = 0;
  for (const PlotSeries& s : series_) longest = std::max(longest, s.label.size());
  for (const Band& b : bands_) longest = std::max(longest, b.label.size());
  for (const VLine& l : lines_) longest = std::max(longest, l.label.size());
  const int per_row = longest > 36 ? 1 : 2;
  const double legend_h = kLegendRow * ((legend_rows + per_row - 1) / per_row) + (legend_rows ? 6 : 0);
  const double total_h = height_px_ + legend_h;
  svg << fmt::format(R"(<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {} {}" width="{}" height="{}" font-family="sans-serif" font-size="11" role="img">)",
                     width_px_, Num(total_h), width_px_, Num(total_h));
  if (!xr.Valid() || !yr.Valid()) {
    svg << fmt::format(R"(<text x="{}" y="{}" text-anchor="middle" fill="#555">no data to plot</text></svg>)",
                       width_px_ / 2, height_px_ / 2);
    return svg.str();
  }
  for (const Band& b : bands_) { xr.Add(b.x0); xr.Add(b.x1); }
  for (const VLine& l : lines_) xr.Add(l.x);
  xr.Pad();
  yr.Pad();
  if (x_range_) xr = {x_range_->first, x_range_->second};
  if (y_range_) yr = {y_range_->first, y_range_->second};
  if (yr.hi - yr.lo < min_y_span_) {
    const double centre = 0.5 * (yr.lo + yr.hi);
    yr = {centre - 0.5 * min_y_span_, centre + 0.5 * min_y_span_};
  }
  double plot_w = width_px_ - kMarginLeft - kMarginRight;
  double plot_h = height_px_ - kMarginTop - kMarginBottom;
  if (equal_aspect_) {
    // Widen the range of the axis that has room to spare, about its centre.
    const double scale = std::min(plot_w / (xr.hi - xr.lo), plot_h / (yr.hi - yr.lo));
    const double cx = 0.5 * (xr.lo + xr.hi), cy = 0.5 * (yr.lo + yr.hi);
    xr = {cx - 0.5 * plot_w / scale, cx + 0.5 * plot_w / scale};
    yr = {cy - 0.5 * plot_h / scale, cy + 0.5 * plot_h / scale};
  }
  auto px = [&](double x) { return kMarginLeft + (x - xr.lo) / (xr.hi - xr.lo) * plot_w; };
  auto py = [&](double y) {
    const double f = (y - yr.lo) / (yr.hi - yr.lo);
    return kMarginTop + (invert_y_ ? f : 1.0 - f) * plot_h;
  };
  const double x_left = kMarginLeft, x_right = kMarginLeft + plot_w;
  const double y_top = kMarginTop, y_bottom = kMarginTop + plot_h;
  svg << fmt::format(R"(<defs><clipPath id="{0}-area"><rect x="{1}" y="{2}" width="{3}" height="{4}"/></clipPath></defs>)",
                     id_, Num(x_left), Num(y_top), Num(plot_w), Num(plot_h));
  const std::string clip = fmt::format("url(#{}-area)", id_);
  svg << fmt::format(R"(<rect x="{}" y="{}" width="{}" height="{}" fill="#fff" stroke="#999"/>)",
                     Num(x_left), Num(y_top), Num(plot_w), Num(plot_h));
  svg << "<g clip-path=\"" << clip << "\">";
  for (const Band& b : bands_) {
    const double a = std::max(x_left, px(std::min(b.x0, b.x1)));
    const double e = std::min(x_right, px(std::max(b.x0, b.x1)));
    if (e > a) {
      svg << fmt::format(R"(<rect x="{}" y="{}" width="{}" height="{}" fill="{}" fill-opacity="0.18"/>)",
                         Num(a), Num(y_top), Num(e - a), Num(plot_h), b.colour);
    }
  }
  svg << "</g>";
  // Ticks and grid.
  const std::vector<double> xt = NiceTicks(xr.lo, xr.hi), yt = NiceTicks(yr.lo, yr.hi);
  const double xstep = xt.size() > 1 ? xt[1] - xt[0] : 1.0, ystep = yt.size() > 1 ? yt[1] - yt[0] : 1.0;
  for (double t : xt) {
    svg << fmt::format(R"(<line x1="{0}" y1="{1}" x2="{0}" y2="{2}" stroke="#e4e4e4"/><text x="{0}" y="{3}" text-anchor="middle">{4}</text>)",
                       Num(px(t)), Num(y_top), Num(y_bottom), Num(y_bottom + 14), FormatTick(t, xstep));
  }
  for (double t : yt) {
    svg << fmt::format(R"(<line x1="{0}" y1="{1}" x2="{2}" y2="{1}" stroke="#e4e4e4"/><text x="{3}" y="{4}" text-anchor="end">{5}</text>)",
                       Num(x_left), Num(py(t)), Num(x_right), Num(x_left - 5), Num(py(t) + 4), FormatTick(t, ystep));
  }
  svg << fmt::format(R"(<text x="{}" y="{}" text-anchor="middle">{}</text>)", Num(x_left + plot_w / 2),
                     Num(y_bottom + 32), EscapeXml(x_label_));
  svg << fmt::format(R"svg(<text transform="translate(13 {}) rotate(-90)" text-anchor="middle">{}</text>)svg",
                     Num(y_top + plot_h / 2), EscapeXml(y_label_));
  svg << "<g clip-path=\"" << clip << "\">";
  for (const VLine& l : lines_) {
    svg << fmt::format(R"(<line x1="{0}" y1="{1}" x2="{0}" y2="{2}" stroke="{3}" stroke-width="1.5" stroke-dasharray="5 3"/>)",
                       Num(px(l.x)), Num(y_top), Num(y_bottom), l.colour);
  }
  for (const PlotSeries& s : series_) {
    const std::string dash = s.dashed ? R"( stroke-dasharray="6 4")" : "";
    if (s.style == SeriesStyle::kLine) {
      std::string points;
      auto flush = [&] {
        if (!points.empty()) {
          svg << fmt::format(R"(<polyline fill="none" stroke="{}" stroke-width="{}"{} points="{}"/>)",
                             s.colour, s.size, dash, points);
        }
        points.clear();
      };
      for (size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
        if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i])) {
          flush();
          continue;
        }
        points += fmt::format("{},{} ", Num(px(s.x[i])), Num(py(s.y[i])));
      }
      flush();
      continue;
    }
    svg << fmt::format(R"(<g fill="{0}" stroke="{0}">)", s.colour);
    for (size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
      if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i])) continue;
      const double x = px(s.x[i]), y = py(s.y[i]), r = s.size;
      if (s.style == SeriesStyle::kDots) {
        svg << fmt::format(R"(<circle cx="{}" cy="{}" r="{}" stroke="none"/>)", Num(x), Num(y), r);
      } else if (s.style == SeriesStyle::kCrosses) {
        svg << fmt::format(R"(<path d="M{0} {1}L{2} {3}M{0} {3}L{2} {1}" stroke-width="1.2" fill="none"/>)",
                           Num(x - r), Num(y - r), Num(x + r), Num(y + r));
      } else {
        const double y0 = py(0.0), half = std::max(2.0, r);
        svg << fmt::format(R"(<rect x="{}" y="{}" width="{}" height="{}" stroke="none"/>)", Num(x - half),
                           Num(std::min(y, y0)), Num(2 * half), Num(std::abs(y0 - y)));
      }
    }
    svg << "</g>";
  }
  for (const Text& t : texts_) {
    svg << fmt::format(R"(<text x="{}" y="{}" fill="{}">{}</text>)", Num(px(t.x) + 5), Num(py(t.y) - 5),
                       t.colour, EscapeXml(t.text));
  }
  svg << "</g>";
  // Legend: a swatch and the label, two entries a row.
  int entry = 0;
  auto legend = [&](const std::string& swatch, const std::string& label) {
    const double x = kMarginLeft + (entry % per_row) * (plot_w / 2);
    const double y = height_px_ + kLegendRow * (entry / per_row) + 4;
    svg << fmt::format(R"svg(<g transform="translate({} {})">{}<text x="22" y="4">{}</text></g>)svg", Num(x), Num(y),
                       swatch, EscapeXml(label));
    ++entry;
  };
  for (const PlotSeries& s : series_) {
    if (s.label.empty()) continue;
    std::string swatch;
    if (s.style == SeriesStyle::kLine) {
      swatch = fmt::format(R"(<line x1="0" y1="0" x2="16" y2="0" stroke="{}" stroke-width="{}"{}/>)", s.colour,
                           s.size, s.dashed ? R"( stroke-dasharray="6 4")" : "");
    } else if (s.style == SeriesStyle::kCrosses) {
      swatch = fmt::format(R"(<path d="M4 -4L12 4M4 4L12 -4" stroke="{}" stroke-width="1.2"/>)", s.colour);
    } else if (s.style == SeriesStyle::kBars) {
      swatch = fmt::format(R"(<rect x="3" y="-5" width="10" height="10" fill="{}"/>)", s.colour);
    } else {
      swatch = fmt::format(R"(<circle cx="8" cy="0" r="3" fill="{}"/>)", s.colour);
    }
    legend(swatch, s.label);
  }
  for (const Band& b : bands_) {
    if (!b.label.empty()) {
      legend(fmt::format(R"(<rect x="0" y="-5" width="16" height="10" fill="{}" fill-opacity="0.25"/>)", b.colour), b.label);
    }
  }
  for (const VLine& l : lines_) {
    if (!l.label.empty()) {
      legend(fmt::format(R"(<line x1="8" y1="-6" x2="8" y2="6" stroke="{}" stroke-width="1.5" stroke-dasharray="3 2"/>)", l.colour),
             l.label);
    }
  }
  svg << "</svg>";
  return svg.str();
}

}  // namespace tumbletrace
