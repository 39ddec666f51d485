// The strong-drag tumbling paddle (invented: 59 g foam, k = 0.12 1/m, a deceleration
// comparable to g, tumbling at 9 rev/s, a wide lens, 0.05 px noise): the fit reaches the
// noise, the CM and k come back. The start of the tumble and the rotation choice must not
// assume a vacuum path (docs/method.md, "Flight through air").
#include <gtest/gtest.h>

#include "support/paddle_checks.hpp"

namespace tumbletrace {
namespace {

TEST(StrongDragPaddle, TumblingFoamPaddleFitsToTheNoise) {
  for (std::uint64_t seed : {1, 2, 3}) {
    const testing::PaddleOutcome o = testing::FitFoamPaddle(seed);
    EXPECT_TRUE(o.free_top_with_drag) << "seed " << seed;
    EXPECT_LT(o.rms_over_noise, 1.2) << "seed " << seed;
    EXPECT_LT(o.cm_worst_sigmas, 3.0) << "seed " << seed;
    EXPECT_LT(std::abs(o.k_relative_error), 0.03) << "seed " << seed;
    // Gaussian noise and no gross errors: an honest sighting is set aside once in 10 000
    // (docs/method.md, "Outliers"); rotation models compared on a vacuum path set aside
    // 20-80 of the 1200 here.
    EXPECT_LE(o.outliers, 3) << "seed " << seed;
  }
}

}  // namespace
}  // namespace tumbletrace
