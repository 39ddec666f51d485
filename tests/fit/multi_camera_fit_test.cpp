// Several synchronised cameras on one throw (invented scenarios, tests/support): a second
// view shrinks the CM's uncertainty, and a camera's clock offset is estimated to a small
// fraction of a frame.
#include <gtest/gtest.h>

#include <cstdio>

#include "support/fit_helpers.hpp"
#include "support/tumble_scenarios.hpp"

namespace tumbletrace {
namespace {

Scenario TwoViewsOfTheWobble(double side_offset_s) {
  Scenario s = testing::WobbleScenario();
  s.cameras = {{"oblique", "oblique_camera.yaml", testing::ObliqueCamera(), 0.0},
               {"side", "side_camera.yaml", testing::SecondObliqueCamera(), side_offset_s}};
  return s;
}

TEST(MultiCameraFit, ASecondCameraShrinksTheCmUncertainty) {
  const Scenario one = testing::WobbleScenario();
  const Scenario two = TwoViewsOfTheWobble(0.0);
  const testing::Recovery a = testing::SimulateAndFit(one, testing::DefaultFitOptions(one));
  const testing::Recovery b = testing::SimulateAndFit(two, testing::DefaultFitOptions(two));
  ASSERT_EQ(b.fit.rms_px_per_camera.size(), 2u);
  for (int i = 0; i < 3; ++i) {
    ASSERT_TRUE(a.summary.cm_sigma_m[i] && b.summary.cm_sigma_m[i]);
    const double error = *b.summary.cm_body_m[i] - b.sim.mass.cm_body_m[i];
    std::printf("cm[%d]: one camera sigma %.4f mm, two cameras sigma %.4f mm (error %+.4f mm)\n", i,
                1e3 * *a.summary.cm_sigma_m[i], 1e3 * *b.summary.cm_sigma_m[i], 1e3 * error);
    EXPECT_LT(*b.summary.cm_sigma_m[i], *a.summary.cm_sigma_m[i]);
    EXPECT_LT(std::abs(error), 3 * *b.summary.cm_sigma_m[i]);
  }
  std::printf("rms per camera: %.3f, %.3f px\n", b.fit.rms_px_per_camera[0], b.fit.rms_px_per_camera[1]);
}

TEST(MultiCameraFit, ClockOffsetOfASecondCameraIsEstimated) {
  // The side camera exposes each frame 0.37 ms (0.37 frame) after the first.
  const Scenario s = TwoViewsOfTheWobble(0.00037);
  FitOptions options = testing::DefaultFitOptions(s);
  options.estimate_time_offsets = true;
  const testing::Recovery r = testing::SimulateAndFit(s, options);
  ASSERT_EQ(r.fit.time_offsets_s.size(), 2u);
  EXPECT_EQ(r.fit.time_offsets_s[0], 0.0);
  const double error = r.fit.time_offsets_s[1] - 0.00037;
  const double sigma = r.fit.sigma_time_offsets_s[1];
  std::printf("offset %.5f ms (truth 0.37000), sigma %.5f ms\n", 1e3 * r.fit.time_offsets_s[1], 1e3 * sigma);
  EXPECT_GT(sigma, 0.0);
  EXPECT_LT(std::abs(error), 3 * sigma);
  EXPECT_LT(std::abs(error), 2e-5);  // 2 % of a frame
  for (int i = 0; i < 3; ++i) {
    EXPECT_LT(std::abs(*r.summary.cm_body_m[i] - r.sim.mass.cm_body_m[i]), 3 * *r.summary.cm_sigma_m[i]);
  }
}

}  // namespace
}  // namespace tumbletrace
