// Calibration from simulated views of a planar target with known intrinsics.
//
// Outside references: OpenCV's cv::calibrateCamera is the independent implementation of
// Zhang's method (Z. Zhang, IEEE TPAMI 22(11) (2000) 1330-1334) that recovers the camera
// the views were projected with by the project's own model (model/camera.hpp); and two
// properties from that paper: views of parallel planes (here: all head-on) are a degenerate
// configuration, and three views of distinct orientation suffice for the five intrinsics.
#include "tumbletrace/calibrate/calibrate_camera.hpp"

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <random>

#include "support/board_views.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

using testing::BoardPoses;
using testing::CalibrationTruth;
using testing::Checkerboard9x6;
using testing::ExactView;

std::vector<TargetView> NoisyViews(const CalibrationTarget& target, int count, double min_tilt,
                                   double max_tilt, double sigma_px, std::uint64_t seed,
                                   double aim_span = 0.7) {
  const CameraIntrinsics truth = CalibrationTruth();
  std::mt19937_64 rng(seed + 1000);
  std::vector<TargetView> views;
  int i = 0;
  for (const RigidTransform& pose :
       BoardPoses(target, truth, count, min_tilt, max_tilt, seed, aim_span)) {
    views.push_back(ExactView(target, truth, pose, sigma_px, &rng, "view " + std::to_string(i++)));
  }
  return views;
}

// The must-show figures: 15 and 25 views of an A3 checkerboard (20 x 14 corners) filling
// most of the frame at 30-55 deg tilt (every fourth view towards a corner of the image),
// 0.1 px noise per coordinate. The principal point is the least determined term (it trades
// off with p1, p2): its reported 1-sigma is about 0.39 / 0.31 px (cx / cy) with 25 views
// and 0.47 / 0.37 px with 15, so the 1 px bound holds for most seeds, not all (100 seeds
// each in calibration_coverage_test: cx within it 99 and 92 times). Each case also checks
// the truth against the reported sigma.
void ExpectKnownIntrinsics(int view_count, std::uint64_t seed) {
  const CameraIntrinsics truth = CalibrationTruth();
  const CalibrationTarget target = testing::Checkerboard20x14();
  const CameraCalibration c = CalibrateCamera(NoisyViews(target, view_count, 30, 55, 0.1, seed, 0.3),
                                              target, CalibrationOptions{});
  const CameraIntrinsics& k = c.intrinsics;
  std::cout << fmt::format(
      "{} views: fx error {:.4f} %, fy error {:.4f} %, cx error {:.3f} px, cy error {:.3f} px, "
      "k1 error {:.3f} %, rms {:.4f} px; 1-sigma fx {:.3f} px, cx {:.3f} px, cy {:.3f} px, k1 "
      "{:.5f}\n",
      view_count, 100 * (k.fx_px / truth.fx_px - 1), 100 * (k.fy_px / truth.fy_px - 1),
      k.cx_px - truth.cx_px, k.cy_px - truth.cy_px,
      100 * (k.distortion[0] / truth.distortion[0] - 1), c.rms_px, c.sigma_fx_fy_cx_cy_px[0],
      c.sigma_fx_fy_cx_cy_px[2], c.sigma_fx_fy_cx_cy_px[3], *c.sigma_distortion[0]);
  EXPECT_NEAR(k.fx_px / truth.fx_px, 1.0, 0.002);
  EXPECT_NEAR(k.fy_px / truth.fy_px, 1.0, 0.002);
  EXPECT_NEAR(k.cx_px, truth.cx_px, 1.0);
  EXPECT_NEAR(k.cy_px, truth.cy_px, 1.0);
  EXPECT_NEAR(k.distortion[0] / truth.distortion[0], 1.0, 0.05);
  // The rms per coordinate is the noise less the parameters' share: 0.1 sqrt(1 - p/n).
  EXPECT_NEAR(c.rms_px, 0.1, 0.01);
  // The reported 1-sigma covers the truth (3 sigma: a fixed seed, not a coverage check).
  for (int i = 0; i < 4; ++i) {
    const double truth_i[4] = {truth.fx_px, truth.fy_px, truth.cx_px, truth.cy_px};
    const double value_i[4] = {k.fx_px, k.fy_px, k.cx_px, k.cy_px};
    EXPECT_LT(std::abs(value_i[i] - truth_i[i]), 3 * c.sigma_fx_fy_cx_cy_px[i]) << "term " << i;
  }
  EXPECT_LT(std::abs(k.distortion[0] - truth.distortion[0]), 3 * *c.sigma_distortion[0]);
  EXPECT_LT(c.sigma_fx_fy_cx_cy_px[2], 0.6);
  EXPECT_FALSE(c.sigma_distortion[4].has_value());  // k3 held at 0
  EXPECT_FALSE(c.weak) << (c.weak_reasons.empty() ? "" : c.weak_reasons.front());
  EXPECT_EQ(c.views_used, view_count);
  for (const std::string& w : c.warnings) ADD_FAILURE() << "unexpected warning: " << w;
}

TEST(CalibrateCamera, RecoversKnownIntrinsicsFromTwentyFiveNoisyViews) { ExpectKnownIntrinsics(25, 1); }

TEST(CalibrateCamera, RecoversKnownIntrinsicsFromFifteenNoisyViews) { ExpectKnownIntrinsics(15, 2); }

// A small board kept near the edges pins the principal point poorly (it trades off with
// p1, p2 and is seen only through the small boards' perspective): the reported 1-sigma is
// larger than 1 px and the calibration says so, with what to do.
TEST(CalibrateCamera, SmallBoardsNearTheEdgesWarnOfAnUncertainPrincipalPoint) {
  const CalibrationTarget target = Checkerboard9x6();
  const CameraCalibration c =
      CalibrateCamera(NoisyViews(target, 12, 30, 55, 0.1, 7, 0.7), target, CalibrationOptions{});
  std::cout << fmt::format("12 small views: 1-sigma cx {:.3f} px, cy {:.3f} px\n",
                           c.sigma_fx_fy_cx_cy_px[2], c.sigma_fx_fy_cx_cy_px[3]);
  EXPECT_GT(std::max(c.sigma_fx_fy_cx_cy_px[2], c.sigma_fx_fy_cx_cy_px[3]), 1.0);
  bool warned = false;
  for (const std::string& w : c.warnings) warned |= w.find("principal point") != std::string::npos;
  EXPECT_TRUE(warned);
}

// Zhang (2000): views of parallel planes are degenerate; here every view within 3 degrees of
// head-on.
TEST(CalibrateCamera, HeadOnViewsAreFlaggedWeakWithTheReason) {
  const CalibrationTarget target = Checkerboard9x6();
  try {
    const CameraCalibration c =
        CalibrateCamera(NoisyViews(target, 15, 0, 3, 0.1, 11), target, CalibrationOptions{});
    EXPECT_TRUE(c.weak);
    ASSERT_FALSE(c.weak_reasons.empty());
    EXPECT_NE(c.weak_reasons.front().find("head-on"), std::string::npos) << c.weak_reasons.front();
    EXPECT_LT(c.max_tilt_deg, 15.0);
  } catch (const DataError& e) {
    ADD_FAILURE() << "head-on views should give a weak calibration, not refuse: " << e.what();
  }
}

// Tilted views, but all about the same axis by the same angle: parallel boards.
TEST(CalibrateCamera, ParallelTiltedViewsAreFlaggedWeak) {
  const CameraIntrinsics truth = CalibrationTruth();
  const CalibrationTarget target = Checkerboard9x6();
  std::vector<RigidTransform> poses = BoardPoses(target, truth, 12, 0, 0, 3);
  std::mt19937_64 rng(5);
  std::vector<TargetView> views;
  const Eigen::Vector4d b = target.SheetBounds();
  const Eigen::Vector3d centre(0.5 * (b[0] + b[2]), 0.5 * (b[1] + b[3]), 0);
  for (RigidTransform& pose : poses) {
    const Eigen::Vector3d c = pose.Apply(centre);
    pose.rotation = Eigen::AngleAxisd(0.5, Eigen::Vector3d::UnitY()).toRotationMatrix();
    pose.translation_m = 1.3 * c - pose.rotation * centre;
    views.push_back(ExactView(target, truth, pose, 0.1, &rng, "view"));
  }
  const CameraCalibration c = CalibrateCamera(views, target, CalibrationOptions{});
  EXPECT_TRUE(c.weak);
  ASSERT_FALSE(c.weak_reasons.empty());
  EXPECT_NE(c.weak_reasons.front().find("parallel"), std::string::npos) << c.weak_reasons.front();
}

TEST(CalibrateCamera, AnOutlierViewIsLeftOutAndNamed) {
  const CameraIntrinsics truth = CalibrationTruth();
  const CalibrationTarget target = Checkerboard9x6();
  std::vector<TargetView> views = NoisyViews(target, 15, 20, 45, 0.1, 21);
  // A view whose corners were found on a smeared frame: 2 px errors.
  std::mt19937_64 rng(9);
  std::normal_distribution<double> smear(0.0, 2.0);
  for (Eigen::Vector2d& p : views[4].pixels) p += Eigen::Vector2d(smear(rng), smear(rng));
  const CameraCalibration c = CalibrateCamera(views, target, CalibrationOptions{});
  EXPECT_TRUE(c.views[4].outlier);
  EXPECT_EQ(c.views_used, 14);
  EXPECT_NEAR(c.intrinsics.fx_px / truth.fx_px, 1.0, 0.002);
  bool named = false;
  for (const std::string& w : c.warnings) named |= w.find("view 4 left out") != std::string::npos;
  EXPECT_TRUE(named);
}

TEST(CalibrateCamera, ViewsOnlyInTheCentreWarnOfCoverage) {
  const CameraIntrinsics truth = CalibrationTruth();
  const CalibrationTarget target = Checkerboard9x6();
  std::mt19937_64 rng(4);
  std::vector<TargetView> views;
  const Eigen::Vector4d b = target.SheetBounds();
  const Eigen::Vector3d centre(0.5 * (b[0] + b[2]), 0.5 * (b[1] + b[3]), 0);
  for (int i = 0; i < 12; ++i) {
    RigidTransform pose;
    const double a = 2 * M_PI * i / 12;
    pose.rotation = Eigen::AngleAxisd(0.5, Eigen::Vector3d(std::cos(a), std::sin(a), 0)).toRotationMatrix();
    pose.translation_m = Eigen::Vector3d(0, 0, 1.4) - pose.rotation * centre;
    views.push_back(ExactView(target, truth, pose, 0.1, &rng, "view"));
  }
  const CameraCalibration c = CalibrateCamera(views, target, CalibrationOptions{});
  EXPECT_LT(c.coverage.TouchedFraction(), 0.6);
  EXPECT_FALSE(c.coverage.CornersTouched());
  bool warned = false;
  for (const std::string& w : c.warnings) warned |= w.find("of the image's") != std::string::npos;
  EXPECT_TRUE(warned);
}

// Zhang (2000): fewer than three views cannot determine the five intrinsics.
TEST(CalibrateCamera, TwoViewsAreRefusedWithTheReason) {
  const CalibrationTarget target = Checkerboard9x6();
  try {
    CalibrateCamera(NoisyViews(target, 2, 20, 45, 0.1, 1), target, CalibrationOptions{});
    FAIL() << "expected DataError";
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("at least 3"), std::string::npos) << e.what();
  }
}

TEST(CalibrateCamera, BadOptionsAndMixedImageSizesAreRefused) {
  const CalibrationTarget target = Checkerboard9x6();
  std::vector<TargetView> views = NoisyViews(target, 5, 20, 45, 0.1, 2);
  CalibrationOptions options;
  options.min_views = 2;
  EXPECT_THROW(CalibrateCamera(views, target, options), InputError);
  views[3].image_size = cv::Size(640, 480);
  EXPECT_THROW(CalibrateCamera(views, target, CalibrationOptions{}), InputError);
}

}  // namespace
}  // namespace tumbletrace
