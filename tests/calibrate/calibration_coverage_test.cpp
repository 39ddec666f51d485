// Seeded repetitions of the 25-view calibration (long; `ctest -L long`): how often fx, fy,
// cx, cy and k1 meet the bounds, and whether the reported 1-sigma matches the
// scatter (coverage of the 95 % intervals, scatter / mean sigma).
#include <fmt/format.h>
#include <gtest/gtest.h>

#include <random>

#include "support/board_views.hpp"
#include "tumbletrace/calibrate/calibrate_camera.hpp"

namespace tumbletrace {
namespace {

TEST(CalibrationCoverage, TwentyFiveViewsOverSeeds) {
  const CameraIntrinsics truth = testing::CalibrationTruth();
  CalibrationTarget target = testing::Checkerboard9x6();
  target.columns = 15;
  target.rows = 10;
  target.pitch_m = 0.020;
  const int trials = 40;
  // fx, fy, cx, cy, k1
  double sum_sq[5] = {}, sum_sigma[5] = {};
  int covered[5] = {}, within[5] = {};
  for (int seed = 1; seed <= trials; ++seed) {
    std::mt19937_64 rng(seed + 1000);
    std::vector<TargetView> views;
    int i = 0;
    for (const RigidTransform& pose : testing::BoardPoses(target, truth, 25, 30, 55, seed)) {
      views.push_back(testing::ExactView(target, truth, pose, 0.1, &rng, "v" + std::to_string(i++)));
    }
    const CameraCalibration c = CalibrateCamera(views, target, CalibrationOptions{});
    const CameraIntrinsics& k = c.intrinsics;
    const double error[5] = {k.fx_px - truth.fx_px, k.fy_px - truth.fy_px, k.cx_px - truth.cx_px,
                             k.cy_px - truth.cy_px, k.distortion[0] - truth.distortion[0]};
    const double sigma[5] = {c.sigma_fx_fy_cx_cy_px[0], c.sigma_fx_fy_cx_cy_px[1],
                             c.sigma_fx_fy_cx_cy_px[2], c.sigma_fx_fy_cx_cy_px[3],
                             *c.sigma_distortion[0]};
    const double bound[5] = {0.002 * truth.fx_px, 0.002 * truth.fy_px, 1.0, 1.0,
                             0.05 * std::abs(truth.distortion[0])};
    for (int j = 0; j < 5; ++j) {
      sum_sq[j] += error[j] * error[j];
      sum_sigma[j] += sigma[j];
      covered[j] += std::abs(error[j]) <= 1.96 * sigma[j];
      within[j] += std::abs(error[j]) <= bound[j];
    }
  }
  const char* names[5] = {"fx", "fy", "cx", "cy", "k1"};
  for (int j = 0; j < 5; ++j) {
    const double ratio = std::sqrt(sum_sq[j] / trials) / (sum_sigma[j] / trials);
    std::printf("%s: within the issue's bound %d/%d, 95 %% coverage %.3f, rms error / mean sigma %.3f\n",
                names[j], within[j], trials, double(covered[j]) / trials, ratio);
    EXPECT_GE(covered[j], 0.85 * trials) << names[j];
    EXPECT_GT(ratio, 0.7) << names[j];
    EXPECT_LT(ratio, 1.3) << names[j];
  }
}

}  // namespace
}  // namespace tumbletrace
