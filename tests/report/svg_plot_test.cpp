// The report's SVG plots: tick values, number text, escaping, and where the data land.
#include "tumbletrace/report/svg_plot.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <regex>
#include <string>
#include <vector>

namespace tumbletrace {
namespace {

std::vector<double> Coordinates(const std::string& svg, const std::string& element) {
  // The first <element ... points="x,y x,y"> of the SVG, as numbers.
  const size_t at = svg.find("<" + element);
  std::vector<double> out;
  if (at == std::string::npos) return out;
  const size_t p = svg.find("points=\"", at) + 8;
  const std::string points = svg.substr(p, svg.find('"', p) - p);
  const std::regex number(R"(-?[0-9.]+)");
  for (auto it = std::sregex_iterator(points.begin(), points.end(), number); it != std::sregex_iterator(); ++it) {
    out.push_back(std::stod(it->str()));
  }
  return out;
}

TEST(NiceTicks, CoverTheRangeInStepsOfOneTwoOrFive) {
  EXPECT_EQ(NiceTicks(0.0, 1.0, 5), (std::vector<double>{0.0, 0.2, 0.4, 0.6, 0.8, 1.0}));
  const std::vector<double> t = NiceTicks(-3.7, 12.2, 6);
  ASSERT_GE(t.size(), 4u);
  EXPECT_DOUBLE_EQ(t[1] - t[0], 2.0);
  EXPECT_GE(t.front(), -3.7);
  EXPECT_LE(t.back(), 12.2);
  // Tiny ranges and a tick at zero that would print as -0.
  const std::vector<double> tiny = NiceTicks(-1e-3, 1e-3, 4);
  ASSERT_FALSE(tiny.empty());
  for (double v : tiny) EXPECT_LT(std::abs(v), 1.1e-3);
  EXPECT_TRUE(NiceTicks(1.0, 1.0).empty());
  EXPECT_TRUE(NiceTicks(0.0, std::nan("")).empty());
}

TEST(FormatTick, UsesTheDecimalsOfTheStep) {
  EXPECT_EQ(FormatTick(0.25, 0.05), "0.25");
  EXPECT_EQ(FormatTick(1500, 500), "1500");
  EXPECT_EQ(FormatTick(-0.002, 0.001), "-0.002");
  EXPECT_EQ(FormatTick(-1e-17, 0.1), "0.0");
}

TEST(EscapeXml, EscapesMarkupCharacters) {
  EXPECT_EQ(EscapeXml("a<b & \"c\" 'd'>"), "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;");
}

TEST(SvgPlot, LineEndsSitAtThePlotAreasCorners) {
  SvgPlot plot("x, s", "y, m", 600, 300);
  plot.SetXRange(0, 10);
  plot.SetYRange(0, 5);
  plot.Add({"line", {0, 10}, {0, 5}, "#000", SeriesStyle::kLine});
  const std::string svg = plot.Render();
  const std::vector<double> c = Coordinates(svg, "polyline");
  ASSERT_EQ(c.size(), 4u);
  // Margins: 64 left, 14 right, 10 top, 44 bottom: (0, 0) at (64, 256), (10, 5) at (586, 10).
  EXPECT_NEAR(c[0], 64, 0.01);
  EXPECT_NEAR(c[1], 256, 0.01);
  EXPECT_NEAR(c[2], 586, 0.01);
  EXPECT_NEAR(c[3], 10, 0.01);
  EXPECT_NE(svg.find(">x, s<"), std::string::npos);
  EXPECT_NE(svg.find(">y, m<"), std::string::npos);
  EXPECT_NE(svg.find(">line<"), std::string::npos);  // the legend
}

TEST(SvgPlot, InvertedYPutsTheFirstRowAtTheTop) {
  SvgPlot plot("x", "y", 600, 300);
  plot.SetXRange(0, 10);
  plot.SetYRange(0, 5);
  plot.InvertY();
  plot.Add({"", {0, 10}, {0, 5}, "#000", SeriesStyle::kLine});
  const std::vector<double> c = Coordinates(plot.Render(), "polyline");
  ASSERT_EQ(c.size(), 4u);
  EXPECT_NEAR(c[1], 10, 0.01);
  EXPECT_NEAR(c[3], 256, 0.01);
}

TEST(SvgPlot, EqualAspectGivesBothAxesTheSameScale) {
  SvgPlot plot("x", "y", 600, 300);
  plot.SetEqualAspect();
  plot.Add({"", {0, 1, 1}, {0, 0, 1}, "#000", SeriesStyle::kLine});
  const std::vector<double> c = Coordinates(plot.Render(), "polyline");
  ASSERT_EQ(c.size(), 6u);
  const double dx = c[2] - c[0], dy = c[3] - c[5];
  EXPECT_GT(dx, 10);
  EXPECT_NEAR(dx, dy, 0.02);
}

TEST(SvgPlot, NanBreaksALineAndAPlotWithoutDataSaysSo) {
  SvgPlot plot("x", "y");
  plot.Add({"", {0, 1, 2, 3}, {0, 1, std::nan(""), 3}, "#000", SeriesStyle::kLine});
  const std::string svg = plot.Render();
  size_t lines = 0;
  for (size_t at = svg.find("<polyline"); at != std::string::npos; at = svg.find("<polyline", at + 1)) ++lines;
  EXPECT_EQ(lines, 2u);
  EXPECT_EQ(svg.find("nan"), std::string::npos);
  SvgPlot empty("x", "y");
  empty.Add({"", {std::nan("")}, {1.0}, "#000", SeriesStyle::kDots});
  EXPECT_NE(empty.Render().find("no data to plot"), std::string::npos);
}

TEST(SvgPlot, AMinimumYSpanShowsAQuantityConstantToRoundingAsFlat) {
  SvgPlot plot("t", "change");
  plot.SetMinYSpan(0.02);
  plot.Add({"", {0, 1, 2, 3}, {0, 3e-12, -4e-12, 1e-12}, "#000", SeriesStyle::kLine});
  const std::string svg = plot.Render();
  EXPECT_EQ(svg.find("0.00000"), std::string::npos);
  EXPECT_NE(svg.find(">0.010<"), std::string::npos);
}

TEST(SvgPlot, ALongLabelPutsOneLegendEntryARow) {
  SvgPlot plot("t", "v", 600, 300);
  plot.Add({"a label much longer than half of the legend's width", {0, 1}, {0, 1}, "#000", SeriesStyle::kLine});
  plot.Add({"b", {0, 1}, {1, 0}, "#000", SeriesStyle::kLine});
  const std::string svg = plot.Render();
  EXPECT_NE(svg.find("height=\"338.00\""), std::string::npos);  // 300 + two rows of 16 + 6
}

TEST(SvgPlot, BandsLinesMarkersAndBarsAreDrawnAndListed) {
  SvgPlot plot("t", "v");
  plot.SetId("demo");
  plot.Add({"dots", {1, 2}, {1, 2}, "#111", SeriesStyle::kDots});
  plot.Add({"crosses", {1, 2}, {2, 1}, "#222", SeriesStyle::kCrosses});
  plot.Add({"bars", {1, 2}, {3, 4}, "#333", SeriesStyle::kBars});
  plot.AddBand(1.2, 1.8, "#0a0", "window");
  plot.AddVerticalLine(1.5, "#a00", "flag");
  plot.AddText(1, 1, "a<b");
  const std::string svg = plot.Render();
  EXPECT_NE(svg.find("clipPath id=\"demo-area\""), std::string::npos);
  EXPECT_NE(svg.find("<circle"), std::string::npos);
  EXPECT_NE(svg.find("<path d=\"M"), std::string::npos);
  EXPECT_NE(svg.find("fill-opacity=\"0.18\""), std::string::npos);
  EXPECT_NE(svg.find("stroke-dasharray=\"5 3\""), std::string::npos);
  EXPECT_NE(svg.find("a&lt;b"), std::string::npos);
  for (const char* label : {">dots<", ">crosses<", ">bars<", ">window<", ">flag<"}) {
    EXPECT_NE(svg.find(label), std::string::npos) << label;
  }
}

}  // namespace
}  // namespace tumbletrace
