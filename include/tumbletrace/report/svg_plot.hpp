// A small SVG plot for the HTML report: linear axes with ticks and labels, lines, dots,
// crosses and bars, shaded x-ranges, vertical marks, text labels and a legend. The SVG is
// self-contained (no fonts, scripts or links beyond the page) and prints as vector graphics.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace tumbletrace {

enum class SeriesStyle { kLine, kDots, kCrosses, kBars };

struct PlotSeries {
  std::string label;               // in the legend; empty: not listed
  std::vector<double> x, y;        // data coordinates; a NaN in y breaks a line
  std::string colour = "#1f5fa8";  // any SVG colour
  SeriesStyle style = SeriesStyle::kLine;
  double size = 1.6;               // line width or marker radius, px
  bool dashed = false;
};

// Round tick values covering [lo, hi]: steps of 1, 2 or 5 times a power of ten, about
// `target` of them (the usual "nice numbers" rule; common practice).
std::vector<double> NiceTicks(double lo, double hi, int target = 6);
// A tick value with as many decimals as its step needs ("0.25", "1500", "-0.002").
std::string FormatTick(double value, double step);
// Text safe inside SVG and HTML elements and attributes.
std::string EscapeXml(const std::string& text);

class SvgPlot {
 public:
  SvgPlot(std::string x_label, std::string y_label, int width_px = 600, int height_px = 300);

  void Add(PlotSeries series);
  // A shaded x-range (e.g. the free-flight window) and a vertical mark (e.g. a flag).
  void AddBand(double x0, double x1, std::string colour, std::string label);
  void AddVerticalLine(double x, std::string colour, std::string label);
  void AddText(double x, double y, std::string text, std::string colour = "#333");
  // One data unit has the same length on both axes (drawings, image planes).
  void SetEqualAspect() { equal_aspect_ = true; }
  // y grows downwards (image rows).
  void InvertY() { invert_y_ = true; }
  // A fixed range instead of the data's.
  void SetXRange(double lo, double hi) { x_range_ = {{lo, hi}}; }
  void SetYRange(double lo, double hi) { y_range_ = {{lo, hi}}; }
  // The y range is at least this wide, about the data's centre (a quantity constant to
  // rounding then reads as flat, not as noise at 1e-12).
  void SetMinYSpan(double span) { min_y_span_ = span; }
  // A name unique in the page (the plot's clipping area is named after it).
  void SetId(std::string id) { id_ = std::move(id); }

  // The <svg> element. A plot without finite data says so in its place.
  std::string Render() const;

 private:
  struct Band { double x0, x1; std::string colour, label; };
  struct VLine { double x; std::string colour, label; };
  struct Text { double x, y; std::string text, colour; };

  std::string x_label_, y_label_, id_ = "plot";
  int width_px_, height_px_;
  bool equal_aspect_ = false, invert_y_ = false;
  double min_y_span_ = 0.0;
  std::optional<std::pair<double, double>> x_range_, y_range_;
  std::vector<PlotSeries> series_;
  std::vector<Band> bands_;
  std::vector<VLine> lines_;
  std::vector<Text> texts_;
};

}  // namespace tumbletrace
