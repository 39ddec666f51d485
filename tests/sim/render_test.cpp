#include "tumbletrace/sim/render.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numbers>
#include <random>
#include <stdexcept>
#include <vector>

namespace tumbletrace {
namespace {

using Polygon = std::vector<Eigen::Vector2d>;

// Small noiseless frames with round levels, so that expected grey values are exact.
RenderSettings QuietSettings() {
  RenderSettings settings;
  settings.width_px = 160;
  settings.height_px = 120;
  settings.background_level = 40.0;
  settings.body_level = 80.0;
  settings.dot_level = 240.0;
  settings.background_gradient = 0.0;
  settings.noise_sigma_levels = 0.0;
  settings.supersampling = 4;
  return settings;
}

Polygon Rectangle(double x0, double y0, double x1, double y1) {
  return {{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}};
}

RenderedDot Disc(const Eigen::Vector2d& center_px, double radius_px, double intensity = 1.0) {
  RenderedDot dot;
  dot.center_px = center_px;
  dot.shape_px2 = radius_px * radius_px * Eigen::Matrix2d::Identity();
  dot.intensity = intensity;
  return dot;
}

// A dot on a body that fills the frame, so that its surroundings are at the body level.
SceneInstant DotOnBody(const RenderedDot& dot, const RenderSettings& settings) {
  SceneInstant scene;
  scene.silhouette_polygons_px.push_back(
      Rectangle(-10.0, -10.0, settings.width_px + 10.0, settings.height_px + 10.0));
  scene.dots.push_back(dot);
  return scene;
}

struct Excess {
  double sum = 0.0;                                       // sum of (level - reference)
  Eigen::Vector2d centroid_px = Eigen::Vector2d::Zero();  // weighted by (level - reference)
};

// The detector's measure: intensity-weighted centroid of the grey levels above a reference
// level, over a square window of pixel centres around `around_px`.
Excess ExcessAbove(const cv::Mat& frame, double reference_level, const Eigen::Vector2d& around_px,
                   int half_window_px) {
  Excess excess;
  const int cx = static_cast<int>(std::lround(around_px.x()));
  const int cy = static_cast<int>(std::lround(around_px.y()));
  Eigen::Vector2d moment = Eigen::Vector2d::Zero();
  for (int y = std::max(0, cy - half_window_px); y <= std::min(frame.rows - 1, cy + half_window_px);
       ++y) {
    for (int x = std::max(0, cx - half_window_px);
         x <= std::min(frame.cols - 1, cx + half_window_px); ++x) {
      const double w = frame.at<std::uint8_t>(y, x) - reference_level;
      excess.sum += w;
      moment += w * Eigen::Vector2d(x, y);
    }
  }
  excess.centroid_px = moment / excess.sum;
  return excess;
}

TEST(RenderFrame, StaticDotCentroidIsItsCentre) {
  const RenderSettings settings = QuietSettings();
  std::mt19937_64 rng(20240501);
  std::uniform_real_distribution<double> sub_pixel(0.0, 1.0);
  for (double radius_px : {2.0, 2.5, 3.0, 4.0, 6.0}) {
    double worst_px = 0.0;
    for (int trial = 0; trial < 40; ++trial) {
      const Eigen::Vector2d center(70.0 + sub_pixel(rng), 50.0 + sub_pixel(rng));
      const cv::Mat frame = RenderFrame({DotOnBody(Disc(center, radius_px), settings)}, settings);
      const Excess excess = ExcessAbove(frame, settings.body_level, center, 10);
      worst_px = std::max(worst_px, (excess.centroid_px - center).norm());
    }
    EXPECT_LT(worst_px, 0.02) << "radius " << radius_px << " px";
  }
}

TEST(RenderFrame, TiltedEllipseCentroidIsItsCentre) {
  const RenderSettings settings = QuietSettings();
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> sub_pixel(0.0, 1.0);
  RenderedDot dot;
  dot.shape_px2 << 16.0, 6.0, 6.0, 5.0;  // semi-axes about 4.5 and 1.7 px, tilted
  for (int trial = 0; trial < 40; ++trial) {
    dot.center_px = Eigen::Vector2d(80.0 + sub_pixel(rng), 60.0 + sub_pixel(rng));
    const cv::Mat frame = RenderFrame({DotOnBody(dot, settings)}, settings);
    const Excess excess = ExcessAbove(frame, settings.body_level, dot.center_px, 10);
    EXPECT_LT((excess.centroid_px - dot.center_px).norm(), 0.02) << "trial " << trial;
  }
}

TEST(RenderFrame, BlurredDotCentroidIsTheMeanOfTheInstantCentres) {
  const RenderSettings settings = QuietSettings();
  const Eigen::Vector2d start(60.3, 70.8);
  const Eigen::Vector2d step_px(0.9, -0.45);  // per instant: 6.3 px of smear over the exposure
  std::vector<SceneInstant> exposure;
  Eigen::Vector2d mean_center = Eigen::Vector2d::Zero();
  for (int k = 0; k < 8; ++k) {
    const Eigen::Vector2d center = start + k * step_px;
    exposure.push_back(DotOnBody(Disc(center, 3.0), settings));
    mean_center += center / 8.0;
  }
  const cv::Mat frame = RenderFrame(exposure, settings);
  const Excess excess = ExcessAbove(frame, settings.body_level, mean_center, 14);
  EXPECT_LT((excess.centroid_px - mean_center).norm(), 0.03);
  // The smear keeps the dot's total excess: pi r^2 (dot - body).
  const double expected = std::numbers::pi * 9.0 * (settings.dot_level - settings.body_level);
  EXPECT_NEAR(excess.sum, expected, 0.01 * expected);
}

TEST(RenderFrame, LargeDiscExcessIsItsArea) {
  const RenderSettings settings = QuietSettings();
  const double radius_px = 20.0;
  const Eigen::Vector2d center(80.37, 59.81);
  const cv::Mat frame = RenderFrame({DotOnBody(Disc(center, radius_px), settings)}, settings);
  const Excess excess = ExcessAbove(frame, settings.body_level, center, 24);
  const double expected =
      std::numbers::pi * radius_px * radius_px * (settings.dot_level - settings.body_level);
  EXPECT_NEAR(excess.sum, expected, 0.005 * expected);
}

TEST(RenderFrame, DotIntensityScalesItsExcess) {
  const RenderSettings settings = QuietSettings();
  const Eigen::Vector2d center(50.5, 40.25);
  const cv::Mat frame = RenderFrame({DotOnBody(Disc(center, 8.0, 0.5), settings)}, settings);
  const Excess excess = ExcessAbove(frame, settings.body_level, center, 12);
  const double expected =
      std::numbers::pi * 64.0 * 0.5 * (settings.dot_level - settings.body_level);
  EXPECT_NEAR(excess.sum, expected, 0.005 * expected);
  EXPECT_EQ(frame.at<std::uint8_t>(40, 50), 160);  // body + 0.5 (dot - body)
}

TEST(RenderFrame, EllipseExcessIsItsArea) {
  const RenderSettings settings = QuietSettings();
  RenderedDot dot;
  dot.center_px = Eigen::Vector2d(80.2, 60.7);
  dot.shape_px2 << 100.0, 30.0, 30.0, 40.0;
  const cv::Mat frame = RenderFrame({DotOnBody(dot, settings)}, settings);
  const Excess excess = ExcessAbove(frame, settings.body_level, dot.center_px, 15);
  const Eigen::Matrix2d& s = dot.shape_px2;
  const double area_px2 = std::numbers::pi * std::sqrt(s(0, 0) * s(1, 1) - s(0, 1) * s(1, 0));
  const double expected = area_px2 * (settings.dot_level - settings.body_level);
  EXPECT_NEAR(excess.sum, expected, 0.005 * expected);
}

TEST(RenderFrame, SameSeedSameFrameOtherSeedOtherNoise) {
  RenderSettings settings;  // defaults: 1024 x 768, noise 2 levels
  SceneInstant scene;
  scene.silhouette_polygons_px.push_back(Rectangle(300.0, 200.0, 700.0, 500.0));
  scene.dots.push_back(Disc({512.3, 384.6}, 4.0));
  settings.noise_seed = 11;
  const cv::Mat first = RenderFrame({scene}, settings);
  const cv::Mat again = RenderFrame({scene}, settings);
  EXPECT_EQ(cv::norm(first, again, cv::NORM_INF), 0.0);
  settings.noise_seed = 12;
  const cv::Mat other = RenderFrame({scene}, settings);
  cv::Mat differs;
  cv::compare(first, other, differs, cv::CMP_NE);
  EXPECT_GT(cv::countNonZero(differs), first.total() / 2);
}

TEST(RenderFrame, NoiseHasTheRequestedSigma) {
  RenderSettings settings;
  settings.background_level = 100.0;
  settings.background_gradient = 0.0;
  settings.noise_sigma_levels = 2.0;
  settings.noise_seed = 3;
  const cv::Mat frame = RenderFrame({}, settings);
  cv::Scalar mean;
  cv::Scalar stddev;
  cv::meanStdDev(frame, mean, stddev);
  EXPECT_NEAR(mean[0], 100.0, 0.01);
  // Rounding to whole levels adds 1/12 level^2.
  EXPECT_NEAR(stddev[0] * stddev[0], 4.0 + 1.0 / 12.0, 0.04);
  // The far tail, drawn beyond 3.49 sigma by its own sampler: |noise| >= 7.5 levels (3.75
  // sigma) rounds to 8 or more, P = 1.77e-4, about 139 of the 786432 pixels.
  cv::Mat deviation;
  cv::absdiff(frame, cv::Scalar(100.0), deviation);
  cv::Mat far;
  cv::compare(deviation, 8, far, cv::CMP_GE);
  EXPECT_GT(cv::countNonZero(far), 100);
  EXPECT_LT(cv::countNonZero(far), 180);
}

TEST(RenderFrame, EmptyExposureIsTheBackgroundRamp) {
  RenderSettings settings = QuietSettings();
  settings.width_px = 101;
  settings.background_gradient = 10.0;
  const cv::Mat frame = RenderFrame({}, settings);
  ASSERT_EQ(frame.type(), CV_8UC1);
  ASSERT_EQ(frame.size(), cv::Size(101, 120));
  EXPECT_EQ(frame.at<std::uint8_t>(5, 0), 40);
  EXPECT_EQ(frame.at<std::uint8_t>(5, 50), 45);
  EXPECT_EQ(frame.at<std::uint8_t>(119, 100), 50);
}

TEST(RenderFrame, ConcavePolygonFillsAtBodyLevel) {
  const RenderSettings settings = QuietSettings();
  // An L: the notch [80, 120] x [20, 60] stays background. Both windings.
  const Polygon l_shape = {{40.25, 20.0}, {80.0, 20.0},   {80.0, 60.0},
                           {120.0, 60.0}, {120.0, 100.0}, {40.25, 100.0}};
  const Polygon reversed(l_shape.rbegin(), l_shape.rend());
  for (const Polygon& polygon : {l_shape, reversed}) {
    SceneInstant scene;
    scene.silhouette_polygons_px.push_back(polygon);
    const cv::Mat frame = RenderFrame({scene}, settings);
    EXPECT_EQ(frame.at<std::uint8_t>(30, 60), 80);   // arm
    EXPECT_EQ(frame.at<std::uint8_t>(80, 110), 80);  // foot
    EXPECT_EQ(frame.at<std::uint8_t>(30, 100), 40);  // notch
    EXPECT_EQ(frame.at<std::uint8_t>(10, 10), 40);   // outside
    // The left edge at x = 40.25 covers one of the four sample columns of pixel 40
    // (40.375): 40 + 0.25 * (80 - 40).
    EXPECT_EQ(frame.at<std::uint8_t>(50, 40), 50);
    EXPECT_EQ(frame.at<std::uint8_t>(50, 41), 80);
    EXPECT_EQ(frame.at<std::uint8_t>(50, 39), 40);
  }
}

TEST(RenderFrame, SlantedPolygonExcessIsItsArea) {
  const RenderSettings settings = QuietSettings();
  SceneInstant scene;
  const Eigen::Vector2d c(80.3, 60.1);
  scene.silhouette_polygons_px.push_back(
      {c + Eigen::Vector2d(0.0, -45.0), c + Eigen::Vector2d(37.0, 3.0),
       c + Eigen::Vector2d(-2.0, 41.0), c + Eigen::Vector2d(-41.0, -6.0)});
  const cv::Mat frame = RenderFrame({scene}, settings);
  double area_px2 = 0.0;
  const Polygon& p = scene.silhouette_polygons_px[0];
  for (std::size_t i = 0; i < p.size(); ++i) {
    const Eigen::Vector2d& a = p[i];
    const Eigen::Vector2d& b = p[(i + 1) % p.size()];
    area_px2 += 0.5 * (a.x() * b.y() - a.y() * b.x());
  }
  const double excess =
      cv::sum(frame)[0] - settings.background_level * static_cast<double>(frame.total());
  const double expected = std::abs(area_px2) * (settings.body_level - settings.background_level);
  EXPECT_NEAR(excess, expected, 0.005 * expected);
}

TEST(RenderFrame, ExposureAveragesTheInstants) {
  const RenderSettings settings = QuietSettings();
  SceneInstant with_body;
  with_body.silhouette_polygons_px.push_back(Rectangle(20.0, 20.0, 60.0, 60.0));
  const cv::Mat frame = RenderFrame({with_body, SceneInstant{}}, settings);
  EXPECT_EQ(frame.at<std::uint8_t>(40, 40), 60);  // (40 + 80) / 2
  EXPECT_EQ(frame.at<std::uint8_t>(80, 80), 40);
}

TEST(RenderFrame, DotsAreDrawnOverTheBody) {
  const RenderSettings settings = QuietSettings();
  SceneInstant scene;
  scene.dots.push_back(Disc({40.0, 40.0}, 5.0));
  // Listed after the dot, the silhouette is still painted first.
  scene.silhouette_polygons_px.push_back(Rectangle(20.0, 20.0, 60.0, 60.0));
  const cv::Mat frame = RenderFrame({scene}, settings);
  EXPECT_EQ(frame.at<std::uint8_t>(40, 40), 240);
  EXPECT_EQ(frame.at<std::uint8_t>(40, 50), 80);
}

TEST(RenderFrame, AwkwardPrimitivesAreClippedOrSkipped) {
  const RenderSettings settings = QuietSettings();
  const cv::Mat background = RenderFrame({}, settings);

  SceneInstant nothing_visible;
  nothing_visible.silhouette_polygons_px.push_back({{10.0, 10.0}, {50.0, 50.0}});   // no area
  nothing_visible.silhouette_polygons_px.push_back(Rectangle(1e6, 1e6, 2e6, 2e6));  // far away
  nothing_visible.dots.push_back(Disc({30.0, 30.0}, 0.0));                          // zero size
  nothing_visible.dots.push_back(Disc({-50.0, 30.0}, 4.0));                         // off the frame
  RenderedDot edge_on = Disc({60.0, 60.0}, 1.0);
  edge_on.shape_px2 << 9.0, 3.0, 3.0, 1.0;  // a segment: zero area
  nothing_visible.dots.push_back(edge_on);
  EXPECT_EQ(cv::norm(RenderFrame({nothing_visible}, settings), background, cv::NORM_INF), 0.0);

  SceneInstant huge;
  huge.silhouette_polygons_px.push_back(Rectangle(-1e7, -1e7, 1e7, 1e7));
  huge.dots.push_back(Disc({-1.5, 10.0}, 4.0));  // half outside the left edge
  const cv::Mat frame = RenderFrame({huge}, settings);
  EXPECT_EQ(frame.at<std::uint8_t>(60, 80), 80);
  EXPECT_EQ(frame.at<std::uint8_t>(10, 0), 240);
  EXPECT_EQ(frame.at<std::uint8_t>(10, 5), 80);
}

TEST(RenderFrame, SupersamplingOneStillRenders) {
  RenderSettings settings = QuietSettings();
  settings.supersampling = 1;
  SceneInstant scene;
  scene.silhouette_polygons_px.push_back(Rectangle(20.2, 20.2, 60.2, 60.2));
  const cv::Mat frame = RenderFrame({scene}, settings);
  EXPECT_EQ(frame.at<std::uint8_t>(20, 20), 40);  // centre 20 < 20.2: outside
  EXPECT_EQ(frame.at<std::uint8_t>(21, 21), 80);
  EXPECT_EQ(frame.at<std::uint8_t>(60, 60), 80);  // centre 60 < 60.2: inside
}

TEST(RenderFrame, RefusesBadArguments) {
  const RenderSettings good = QuietSettings();
  RenderSettings settings = good;
  settings.width_px = 0;
  EXPECT_THROW(RenderFrame({}, settings), std::invalid_argument);
  settings = good;
  settings.supersampling = 0;
  EXPECT_THROW(RenderFrame({}, settings), std::invalid_argument);
  settings = good;
  settings.noise_sigma_levels = -1.0;
  EXPECT_THROW(RenderFrame({}, settings), std::invalid_argument);
  settings = good;
  settings.body_level = std::nan("");
  EXPECT_THROW(RenderFrame({}, settings), std::invalid_argument);

  SceneInstant scene;
  scene.dots.push_back(Disc({30.0, 30.0}, 3.0, 1.5));
  EXPECT_THROW(RenderFrame({scene}, good), std::invalid_argument);
  scene.dots[0] = Disc({30.0, 30.0}, 3.0);
  scene.dots[0].shape_px2 << 4.0, 0.0, 0.0, -4.0;
  EXPECT_THROW(RenderFrame({scene}, good), std::invalid_argument);
  scene.dots[0].shape_px2 << 4.0, 1.0, 0.0, 4.0;
  EXPECT_THROW(RenderFrame({scene}, good), std::invalid_argument);
  scene.dots[0] = Disc({std::nan(""), 30.0}, 3.0);
  EXPECT_THROW(RenderFrame({scene}, good), std::invalid_argument);

  SceneInstant bad_polygon;
  bad_polygon.silhouette_polygons_px.push_back({{0.0, 0.0}, {10.0, INFINITY}, {10.0, 0.0}});
  EXPECT_THROW(RenderFrame({bad_polygon}, good), std::invalid_argument);
}

}  // namespace
}  // namespace tumbletrace
