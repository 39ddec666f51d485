// Each marker's own robust scale for the outlier test: a noisier marker gets its own,
// bounded by the floor and the cap; a marker with too few sightings gets the pooled one.
#include "tumbletrace/fit/robust_scale.hpp"

#include <gtest/gtest.h>

#include <random>

namespace tumbletrace {
namespace {

struct Sample {
  std::vector<Eigen::Vector2d> residuals_px;
  std::vector<int> group;
};

// Normal residuals of standard deviation sigma[g] for `count[g]` sightings of group g.
Sample Draw(const std::vector<double>& sigma, const std::vector<int>& count, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  Sample s;
  for (size_t g = 0; g < sigma.size(); ++g) {
    for (int k = 0; k < count[g]; ++k) {
      s.residuals_px.emplace_back(sigma[g] * normal(rng), sigma[g] * normal(rng));
      s.group.push_back(static_cast<int>(g));
    }
  }
  return s;
}

TEST(RobustScale, EachGroupGetsItsOwnWithinTheBounds) {
  const Sample s = Draw({0.1, 0.1, 0.3, 0.01, 3.0}, {2000, 2000, 2000, 2000, 2000}, 21);
  const double pooled = PooledRobustSigmaPx(s.residuals_px, {});
  const std::vector<double> scale = RobustSigmaPerGroupPx(s.residuals_px, s.group, {});
  const RobustScaleOptions bounds;
  // The MAD of 4000 normal components is within about 2 % (1 sigma) of the truth.
  EXPECT_NEAR(scale[0], 0.1, 0.1 * 0.08);
  EXPECT_NEAR(scale[2 * 2000], 0.3, 0.3 * 0.08);
  EXPECT_DOUBLE_EQ(scale[3 * 2000], bounds.floor_fraction * pooled);  // 0.01: floored
  EXPECT_DOUBLE_EQ(scale[4 * 2000], bounds.cap_factor * pooled);      // 3.0: capped
}

TEST(RobustScale, TooFewComponentsTakeThePooledScale) {
  const Sample s = Draw({0.1, 0.3}, {500, 9}, 22);
  const std::vector<double> scale = RobustSigmaPerGroupPx(s.residuals_px, s.group, {});
  EXPECT_DOUBLE_EQ(scale.back(), PooledRobustSigmaPx(s.residuals_px, {}));
}

// Only the flagged sightings count: a gross outlier left out of `from` changes nothing.
TEST(RobustScale, FromSelectsTheSightings) {
  Sample s = Draw({0.2}, {200}, 23);
  std::vector<bool> from(200, true);
  const double before = RobustSigmaPerGroupPx(s.residuals_px, s.group, from)[0];
  for (int k = 0; k < 90; ++k) {
    s.residuals_px[k] *= 50.0;
    from[k] = false;
  }
  EXPECT_GT(RobustSigmaPerGroupPx(s.residuals_px, s.group, {})[0], 1.5 * before);
  EXPECT_NEAR(RobustSigmaPerGroupPx(s.residuals_px, s.group, from)[0], before, 0.3 * before);
}

}  // namespace
}  // namespace tumbletrace
