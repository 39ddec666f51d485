// Collecting target views from a clip: a board held in 12 poses, each for 3 frames with a
// little hand shake, written as H.264 (the clip module's writer) and read back through the
// same frame source `calibrate` uses. The near-repeats are skipped, the calibration from the
// clip recovers the camera the frames were rendered with.
#include "tumbletrace/calibrate/collect_views.hpp"

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <random>

#include "support/board_views.hpp"
#include "support/temp_dir.hpp"
#include "tumbletrace/calibrate/calibrate_camera.hpp"
#include "tumbletrace/clip/video_writer.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

using testing::CalibrationTruth;

TargetView ViewOf(std::vector<int> ids, std::vector<Eigen::Vector2d> pixels) {
  TargetView v;
  v.ids = std::move(ids);
  v.pixels = std::move(pixels);
  return v;
}

TEST(ViewDistance, RmsOverTheSharedFeatures) {
  const TargetView a = ViewOf({0, 1, 2, 3}, {{10, 10}, {20, 10}, {10, 20}, {20, 20}});
  TargetView b = a;
  for (Eigen::Vector2d& p : b.pixels) p += Eigen::Vector2d(3, 4);
  EXPECT_NEAR(*ViewDistancePx(a, a), 0.0, 1e-12);
  EXPECT_NEAR(*ViewDistancePx(a, b), 5.0, 1e-12);
  // Three of four shared: still compared, over those three.
  const TargetView c = ViewOf({1, 2, 3, 9}, {{23, 14}, {13, 24}, {23, 24}, {0, 0}});
  EXPECT_NEAR(*ViewDistancePx(a, c), 5.0, 1e-12);
  // One of four shared: not comparable (another part of the board).
  const TargetView d = ViewOf({3, 7, 8, 9}, {{20, 20}, {0, 0}, {0, 0}, {0, 0}});
  EXPECT_FALSE(ViewDistancePx(a, d).has_value());
}

TEST(CollectTargetViews, BadOptionsAreRefused) {
  CollectOptions o;
  o.step = 0;
  EXPECT_NE(o.Validate().find("--every"), std::string::npos);
  o.step = 1;
  o.min_change_px = -1.0;
  EXPECT_NE(o.Validate().find("--min-change"), std::string::npos);
}

TEST(CollectTargetViews, AClipOfAHandHeldBoardCalibratesTheCamera) {
  const CameraIntrinsics truth = CalibrationTruth();
  const CalibrationTarget target = testing::Checkerboard9x6();
  const testing::TempDir dir("collect_clip");
  const std::filesystem::path clip = dir.path() / "board.mp4";
  const int poses = 12, held = 3;
  {
    VideoWriter writer(clip, cv::Size(truth.width_px, truth.height_px), 30.0);
    std::mt19937_64 shake(3);
    std::normal_distribution<double> mm(0.0, 0.5e-3);
    int frame = 0;
    for (const RigidTransform& pose : testing::BoardPoses(target, truth, poses, 25, 50, 5, 0.3)) {
      for (int k = 0; k < held; ++k) {
        RigidTransform shaken = pose;
        shaken.translation_m += Eigen::Vector3d(mm(shake), mm(shake), mm(shake));
        BoardImageSettings settings;
        settings.supersampling = 2;
        settings.noise_seed = ++frame;
        writer.Write(RenderBoardImage(target.BlackPolygons(), truth, shaken, settings));
      }
    }
  }
  const CollectedViews kept = CollectTargetViews(clip, target, CollectOptions{}, {});
  EXPECT_EQ(kept.images_read, poses * held);
  EXPECT_TRUE(kept.missed.empty()) << kept.missed.front();
  EXPECT_EQ(kept.views.size(), static_cast<size_t>(poses));
  EXPECT_EQ(kept.repeats.size(), static_cast<size_t>(poses * (held - 1)));
  EXPECT_NEAR(kept.min_change_px, 0.02 * std::hypot(1024, 768), 1e-9);
  ASSERT_FALSE(kept.views.empty());
  EXPECT_EQ(kept.views.front().name, "frame 0");

  const CameraCalibration c = CalibrateCamera(kept.views, target, CalibrationOptions{});
  const CameraIntrinsics& k = c.intrinsics;
  std::cout << fmt::format(
      "from an H.264 clip, {} views kept of {}: fx {:+.3f} %, fy {:+.3f} %, cx {:+.2f} px, cy "
      "{:+.2f} px (1-sigma {:.2f}, {:.2f}), k1 {:+.2f} %, rms {:.3f} px\n",
      kept.views.size(), kept.images_read, 100 * (k.fx_px / truth.fx_px - 1),
      100 * (k.fy_px / truth.fy_px - 1), k.cx_px - truth.cx_px, k.cy_px - truth.cy_px,
      c.sigma_fx_fy_cx_cy_px[2], c.sigma_fx_fy_cx_cy_px[3],
      100 * (k.distortion[0] / truth.distortion[0] - 1), c.rms_px);
  EXPECT_NEAR(k.fx_px / truth.fx_px, 1.0, 0.003);
  EXPECT_NEAR(k.fy_px / truth.fy_px, 1.0, 0.003);
  EXPECT_LT(std::abs(k.cx_px - truth.cx_px), 3 * c.sigma_fx_fy_cx_cy_px[2] + 0.5);
  EXPECT_LT(std::abs(k.cy_px - truth.cy_px), 3 * c.sigma_fx_fy_cx_cy_px[3] + 0.5);
  EXPECT_NEAR(k.distortion[0] / truth.distortion[0], 1.0, 0.1);
  EXPECT_LT(c.rms_px, 0.3);

  // Every frame kept when asked: three times the views, none skipped.
  CollectOptions all;
  all.min_change_px = 0.0;
  EXPECT_EQ(CollectTargetViews(clip, target, all, {}).views.size(), static_cast<size_t>(poses * held));
  // Every third frame: one per pose, nothing to skip.
  CollectOptions third;
  third.step = held;
  const CollectedViews sparse = CollectTargetViews(clip, target, third, {});
  EXPECT_EQ(sparse.views.size(), static_cast<size_t>(poses));
  EXPECT_TRUE(sparse.repeats.empty());
}

}  // namespace
}  // namespace tumbletrace
