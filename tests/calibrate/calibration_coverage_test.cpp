// Seeded repetitions of the must-show calibrations (long; `ctest -L long`): 15 and 25 views
// of the A3 checkerboard filling most of the frame (every fourth view in a corner), 0.1 px
// noise. How often fx, fy, cx, cy and k1 meet the bounds, their mean error (bias),
// and whether the reported 1-sigma matches the scatter (coverage of the 95 % intervals,
// rms error / mean sigma).
#include <fmt/format.h>
#include <gtest/gtest.h>

#include <random>

#include "support/board_views.hpp"
#include "tumbletrace/calibrate/calibrate_camera.hpp"

namespace tumbletrace {
namespace {

class CalibrationCoverage : public ::testing::TestWithParam<int> {};

TEST_P(CalibrationCoverage, OverSeeds) {
  const int view_count = GetParam();
  const CameraIntrinsics truth = testing::CalibrationTruth();
  const CalibrationTarget target = testing::Checkerboard20x14();
  const int trials = 100;
  // fx, fy, cx, cy, k1
  double sum_error[5] = {}, sum_sq[5] = {}, sum_sigma[5] = {};
  int covered[5] = {}, within[5] = {};
  for (int seed = 1; seed <= trials; ++seed) {
    std::mt19937_64 rng(seed + 1000);
    std::vector<TargetView> views;
    int i = 0;
    for (const RigidTransform& pose :
         testing::BoardPoses(target, truth, view_count, 30, 55, seed, 0.3)) {
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
      sum_error[j] += error[j];
      sum_sq[j] += error[j] * error[j];
      sum_sigma[j] += sigma[j];
      covered[j] += std::abs(error[j]) <= 1.96 * sigma[j];
      within[j] += std::abs(error[j]) <= bound[j];
    }
  }
  const char* names[5] = {"fx", "fy", "cx", "cy", "k1"};
  for (int j = 0; j < 5; ++j) {
    const double mean_sigma = sum_sigma[j] / trials;
    const double ratio = std::sqrt(sum_sq[j] / trials) / mean_sigma;
    const double bias = sum_error[j] / trials;
    std::cout << fmt::format(
        "{} views, {}: within the issue's bound {}/{}, mean error {:+.4g} (mean sigma {:.4g}), "
        "95 % coverage {:.2f}, rms error / mean sigma {:.3f}\n",
        view_count, names[j], within[j], trials, bias, mean_sigma, double(covered[j]) / trials,
        ratio);
    // The bounds: fx, fy, k1 are far inside theirs; cx's 1-sigma is about 0.39 px with 25
    // views and 0.47 px with 15, so some seeds pass 1 px (measured: 99 and 92 of 100).
    EXPECT_GE(within[j], (j == 2 || j == 3 ? 0.85 : 0.99) * trials) << names[j];
    // No bias: the mean error within 3 standard errors.
    EXPECT_LT(std::abs(bias), 3 * ratio * mean_sigma / std::sqrt(trials)) << names[j];
    // Honest sigma: 95 % coverage within the binomial scatter of 100 trials, and the scatter
    // within 20 % of the reported sigma.
    EXPECT_GE(covered[j], 0.89 * trials) << names[j];
    EXPECT_GT(ratio, 0.8) << names[j];
    EXPECT_LT(ratio, 1.2) << names[j];
  }
}

INSTANTIATE_TEST_SUITE_P(FifteenAndTwentyFiveViews, CalibrationCoverage, ::testing::Values(15, 25));

}  // namespace
}  // namespace tumbletrace
