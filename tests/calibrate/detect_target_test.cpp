// Finding the target in rendered images (sim/render_board.hpp) of known geometry, and the
// calibration from them: the whole chain a user runs, on images with known truth.
#include "tumbletrace/calibrate/detect_target.hpp"

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <chrono>
#include <random>

#include "support/board_views.hpp"
#include "tumbletrace/calibrate/calibrate_camera.hpp"

namespace tumbletrace {
namespace {

using testing::BoardPoses;
using testing::CalibrationTruth;
using testing::ExactView;

cv::Mat Render(const CalibrationTarget& target, const RigidTransform& pose, std::uint64_t seed) {
  BoardImageSettings settings;
  settings.noise_seed = seed;
  return RenderBoardImage(target.BlackPolygons(), CalibrationTruth(), pose, settings);
}

// Rms distance per coordinate of the detected features from their exact projections, px.
double FeatureRms(const TargetView& found, const TargetView& exact) {
  double sum = 0.0;
  for (size_t i = 0; i < found.ids.size(); ++i) {
    const auto at = std::find(exact.ids.begin(), exact.ids.end(), found.ids[i]);
    EXPECT_NE(at, exact.ids.end());
    sum += (found.pixels[i] - exact.pixels[at - exact.ids.begin()]).squaredNorm();
  }
  return std::sqrt(sum / (2.0 * found.ids.size()));
}

struct Chain {
  std::vector<TargetView> views;
  double feature_rms_px = 0.0;  // over all views
  int rendered = 0;
};

Chain DetectRendered(const CalibrationTarget& target, int count, std::uint64_t seed) {
  const CameraIntrinsics truth = CalibrationTruth();
  Chain chain;
  double sum = 0.0;
  int n = 0;
  int i = 0;
  std::mt19937_64 rng(0);
  for (const RigidTransform& pose : BoardPoses(target, truth, count, 15, 40, seed)) {
    const cv::Mat image = Render(target, pose, seed + i);
    ++chain.rendered;
    std::optional<TargetView> view = DetectTarget(image, target, "view " + std::to_string(i++));
    if (!view) continue;
    const TargetView exact = ExactView(target, truth, pose, 0.0, &rng, "exact");
    const double rms = FeatureRms(*view, exact);
    sum += rms * rms * view->ids.size();
    n += static_cast<int>(view->ids.size());
    chain.views.push_back(std::move(*view));
  }
  chain.feature_rms_px = n > 0 ? std::sqrt(sum / n) : 0.0;
  return chain;
}

void ExpectNearTruth(const CameraCalibration& c, double focal_tolerance, double centre_px,
                     double k1_tolerance) {
  const CameraIntrinsics truth = CalibrationTruth();
  const CameraIntrinsics& k = c.intrinsics;
  std::cout << fmt::format(
      "{} views: fx error {:.4f} %, fy error {:.4f} %, cx error {:.3f} px, cy error {:.3f} px, "
      "k1 error {:.3f} %, rms {:.4f} px\n",
      c.views_used, 100 * (k.fx_px / truth.fx_px - 1), 100 * (k.fy_px / truth.fy_px - 1),
      k.cx_px - truth.cx_px, k.cy_px - truth.cy_px,
      100 * (k.distortion[0] / truth.distortion[0] - 1), c.rms_px);
  EXPECT_NEAR(k.fx_px / truth.fx_px, 1.0, focal_tolerance);
  EXPECT_NEAR(k.fy_px / truth.fy_px, 1.0, focal_tolerance);
  EXPECT_NEAR(k.cx_px, truth.cx_px, centre_px);
  EXPECT_NEAR(k.cy_px, truth.cy_px, centre_px);
  EXPECT_NEAR(k.distortion[0] / truth.distortion[0], 1.0, k1_tolerance);
}

// What a kind of target must achieve on 15 rendered views.
struct ChainBounds {
  size_t min_found;           // views in which the target is found
  double feature_rms_px;      // detected features from their exact projections
  double focal, centre_px, k1;  // intrinsics from those views (relative, px, relative)
};

void ExpectChainCalibrates(const CalibrationTarget& target, std::uint64_t seed,
                           const ChainBounds& bounds) {
  const Chain chain = DetectRendered(target, 15, seed);
  std::cout << fmt::format("{}: found in {} of {} images; features {:.4f} px rms from their "
                           "exact projections\n",
                           TargetKindName(target.kind), chain.views.size(), chain.rendered,
                           chain.feature_rms_px);
  EXPECT_GE(chain.views.size(), bounds.min_found);
  EXPECT_LT(chain.feature_rms_px, bounds.feature_rms_px);
  ExpectNearTruth(CalibrateCamera(chain.views, target, CalibrationOptions{}), bounds.focal,
                  bounds.centre_px, bounds.k1);
}

TEST(DetectTarget, CheckerboardCornersInRenderedViewsCalibrateTheCamera) {
  ExpectChainCalibrates(testing::Checkerboard9x6(), 31, {14, 0.1, 0.002, 1.0, 0.05});
}

TEST(DetectTarget, CircleGridInRenderedViewsCalibratesTheCamera) {
  CalibrationTarget target;
  target.kind = TargetKind::kCircleGrid;
  target.columns = 7;
  target.rows = 5;
  target.pitch_m = 0.035;
  target.circle_diameter_m = 0.015;
  // The centre of a circle's image is not the image of its centre (perspective): a bias of a
  // few hundredths of a pixel at these sizes and tilts, hence the wider bounds.
  ExpectChainCalibrates(target, 41, {12, 0.2, 0.005, 2.0, 0.10});
}

TEST(DetectTarget, CharucoCornersInRenderedViewsCalibrateTheCamera) {
  ExpectChainCalibrates(testing::Charuco(8, 6, 0.035, 0.026), 51, {14, 0.15, 0.003, 1.5, 0.05});
}

TEST(DetectTarget, AnImageWithoutTheTargetGivesNothing) {
  const CalibrationTarget target = testing::Checkerboard9x6();
  const cv::Mat blank(768, 1024, CV_8U, cv::Scalar(128));
  EXPECT_FALSE(DetectTarget(blank, target, "blank").has_value());
}

}  // namespace
}  // namespace tumbletrace
