#include "tumbletrace/calibrate/coverage.hpp"

#include <gtest/gtest.h>

namespace tumbletrace {
namespace {

TEST(Coverage, CountsFeaturesPerCellAndDrawsTheMap) {
  // A 100 x 60 image in 4 x 3 cells of 25 x 20 px; pixel i spans [i - 0.5, i + 0.5).
  const std::vector<Eigen::Vector2d> pixels = {{0, 0}, {24.4, 19.4}, {24.6, 0}, {99.4, 59.4},
                                               {-0.6, 10}, {50, 30}};
  const CoverageMap map = MapCoverage(pixels, 100, 60, 4, 3);
  EXPECT_EQ(map.counts[0], 2);   // (0, 0) and (24.4, 19.4)
  EXPECT_EQ(map.counts[1], 1);   // (24.6, 0)
  EXPECT_EQ(map.counts[11], 1);  // the last pixel
  EXPECT_EQ(map.counts[6], 1);   // (50, 30): column 2, row 1
  EXPECT_DOUBLE_EQ(map.TouchedFraction(), 4.0 / 12.0);
  EXPECT_FALSE(map.CornersTouched());
  EXPECT_EQ(map.Lines(), (std::vector<std::string>{"##..", "..#.", "...#"}));
}

TEST(Coverage, AnEmptyMapTouchesNothing) {
  const CoverageMap map = MapCoverage({}, 100, 60, 4, 3);
  EXPECT_EQ(map.TouchedFraction(), 0.0);
  EXPECT_FALSE(map.CornersTouched());
}

}  // namespace
}  // namespace tumbletrace
