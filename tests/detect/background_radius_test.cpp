#include "tumbletrace/detect/background_radius.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "tumbletrace/sim/render.hpp"

namespace tumbletrace {
namespace {

// A frame with six dots of `diameter_px` on a body-level bar and on the background, sensor
// noise 2 grey levels; the dots' exact centres in `centres`.
cv::Mat DotsFrame(double diameter_px, std::vector<Eigen::Vector2d>* centres) {
  SceneInstant scene;
  scene.silhouette_polygons_px.push_back({{100, 300}, {900, 300}, {900, 360}, {100, 360}});
  const double r = 0.5 * diameter_px;
  for (int k = 0; k < 6; ++k) {
    RenderedDot dot;
    dot.center_px = Eigen::Vector2d(160.3 + 130.0 * k, k % 2 == 0 ? 330.4 : 520.7);
    dot.shape_px2 = r * r * Eigen::Matrix2d::Identity();
    scene.dots.push_back(dot);
    centres->push_back(dot.center_px);
  }
  RenderSettings settings;
  settings.noise_seed = 7;
  return RenderFrame({scene}, settings);
}

double CentreRmsPx(const std::vector<Detection>& found, const std::vector<Eigen::Vector2d>& centres) {
  double sum = 0.0;
  for (const Eigen::Vector2d& c : centres) {
    double best = 1e9;
    for (const Detection& d : found) best = std::min(best, (d.center_px - c).squaredNorm());
    sum += best;
  }
  return std::sqrt(sum / centres.size());
}

// A dot is removed from the background by a disc filter only when it is narrower than the
// filter (d < 2r + 1): the chosen radius is, for small and large dots, and the centres found
// with it are right where the default radius's are not.
TEST(BackgroundRadiusTest, ChosenRadiusIsWiderThanTheDotsAndGivesTheirCentres) {
  for (const double diameter : {5.0, 9.0, 13.0, 18.0}) {
    SCOPED_TRACE(diameter);
    std::vector<Eigen::Vector2d> centres;
    const cv::Mat frame = DotsFrame(diameter, &centres);
    const DetectorOptions defaults;
    const BackgroundRadiusChoice choice = ChooseBackgroundRadius(frame, defaults);
    EXPECT_GE(choice.blobs, 6);
    EXPECT_NEAR(choice.median_diameter_px, diameter, 0.15 * diameter + 1.0);
    EXPECT_GT(2 * choice.radius_px + 1, 1.2 * diameter);
    EXPECT_GE(choice.radius_px, defaults.background_radius_px);
    DetectorOptions chosen = defaults;
    chosen.background_radius_px = choice.radius_px;
    const std::vector<Detection> found = MarkerDetector(chosen).Detect(frame);
    EXPECT_LT(CentreRmsPx(found, centres), 0.05);
  }
  // The default radius (4 px) keeps most of an 18 px dot in its background: its blob is a
  // ring or nothing, and the centres are off or missing.
  std::vector<Eigen::Vector2d> centres;
  const cv::Mat frame = DotsFrame(18.0, &centres);
  const std::vector<Detection> found = MarkerDetector(DetectorOptions{}).Detect(frame);
  EXPECT_TRUE(found.size() < centres.size() || CentreRmsPx(found, centres) > 0.05);
}

// A frame where the body's lit faces (two bright rectangles, 30 x 60 px, at 200 grey
// levels) outnumber the markers seen (one dot of 8 px): the faces pass the wide sizing
// filter as two blobs, but they are not marker-like, and the radius fits the dot.
TEST(BackgroundRadiusTest, LitFacesOfTheBodyDoNotSetTheRadius) {
  SceneInstant scene;
  scene.silhouette_polygons_px.push_back({{200, 300}, {230, 300}, {230, 360}, {200, 360}});
  scene.silhouette_polygons_px.push_back({{400, 300}, {430, 300}, {430, 360}, {400, 360}});
  RenderedDot dot;
  dot.center_px = Eigen::Vector2d(600.3, 500.6);
  dot.shape_px2 = 16.0 * Eigen::Matrix2d::Identity();
  scene.dots.push_back(dot);
  RenderSettings settings;
  settings.body_level = 200.0;
  settings.noise_seed = 3;
  const cv::Mat frame = RenderFrame({scene}, settings);
  const BackgroundRadiusChoice choice = ChooseBackgroundRadius(frame, DetectorOptions{});
  EXPECT_NEAR(choice.median_diameter_px, 8.0, 2.0);
  EXPECT_LE(choice.radius_px, 7);
}

// A frame without dots keeps the options' radius.
TEST(BackgroundRadiusTest, NoBlobsKeepsTheGivenRadius) {
  RenderSettings settings;
  const cv::Mat frame = RenderFrame({}, settings);
  DetectorOptions options;
  options.background_radius_px = 6;
  const BackgroundRadiusChoice choice = ChooseBackgroundRadius(frame, options);
  EXPECT_EQ(choice.blobs, 0);
  EXPECT_EQ(choice.radius_px, 6);
}

}  // namespace
}  // namespace tumbletrace
