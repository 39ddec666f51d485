#include "tumbletrace/calibrate/target.hpp"

#include <gtest/gtest.h>

#include <fstream>

#include "support/temp_dir.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

std::string ErrorOf(const std::string& text) {
  try {
    ParseTargetYaml(text, "target.yaml");
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

TEST(Target, ReadsEachKindInItsUnits) {
  const CalibrationTarget board =
      ParseTargetYaml("kind: checkerboard\ninner_corners: [9, 6]\nsquare: 25\n", "t");
  EXPECT_EQ(board.kind, TargetKind::kCheckerboard);
  EXPECT_EQ(board.columns, 9);
  EXPECT_EQ(board.rows, 6);
  EXPECT_DOUBLE_EQ(board.pitch_m, 0.025);
  ASSERT_EQ(board.FeaturePoints().size(), 54u);
  EXPECT_EQ(board.FeaturePoints()[10], Eigen::Vector3d(0.025, 0.025, 0));  // row 1, column 1
  // (columns + 1) x (rows + 1) squares, half of them black (rounded up).
  EXPECT_EQ(board.BlackPolygons().size(), 35u);

  const CalibrationTarget grid = ParseTargetYaml(
      "kind: circle-grid\nunits: m\ncircles: [7, 5]\nspacing: 0.03\ndiameter: 0.012\n", "t");
  EXPECT_EQ(grid.FeaturePoints().size(), 35u);
  EXPECT_EQ(grid.BlackPolygons().size(), 35u);
  EXPECT_DOUBLE_EQ(grid.circle_diameter_m, 0.012);

  const CalibrationTarget charuco = ParseTargetYaml(
      "kind: charuco\nsquares: [8, 6]\nsquare: 35\nmarker: 26\ndictionary: DICT_5X5_100\n", "t");
  EXPECT_EQ(charuco.FeaturePoints().size(), 35u);  // (8 - 1) x (6 - 1) inner corners
  EXPECT_EQ(charuco.FeatureColumns(), 7);
}

TEST(Target, UnknownKeysAndBadValuesAreRefusedByName) {
  EXPECT_NE(ErrorOf("kind: checkerboard\ninner_corners: [9, 6]\nsquare: 25\nsquares: 3\n")
                .find("'squares'"),
            std::string::npos);
  EXPECT_NE(ErrorOf("kind: board\n").find("key 'kind': expected checkerboard, circle-grid or charuco"),
            std::string::npos);
  EXPECT_NE(ErrorOf("kind: checkerboard\ninner_corners: [9.5, 6]\nsquare: 25\n").find("inner_corners"),
            std::string::npos);
  EXPECT_NE(ErrorOf("kind: checkerboard\ninner_corners: [9, 6]\nsquare: -1\n").find("'square'"),
            std::string::npos);
  EXPECT_NE(ErrorOf("kind: circle-grid\ncircles: [4, 3]\nspacing: 10\ndiameter: 10\n").find("diameter"),
            std::string::npos);
  EXPECT_NE(ErrorOf("kind: charuco\nsquares: [8, 6]\nsquare: 35\nmarker: 26\ndictionary: DICT_9X9\n")
                .find("DICT_4X4_50"),
            std::string::npos);
  EXPECT_NE(ErrorOf("kind: charuco\nsquares: [20, 20]\nsquare: 35\nmarker: 26\ndictionary: DICT_4X4_50\n")
                .find("at least 200 markers"),
            std::string::npos);
  EXPECT_NE(ErrorOf("kind: checkerboard\nunits: cm\ninner_corners: [9, 6]\nsquare: 25\n").find("units"),
            std::string::npos);
}

TEST(Target, WritesAPrintableSvgAtTrueSize) {
  testing::TempDir dir("target_svg");
  const CalibrationTarget board =
      ParseTargetYaml("kind: checkerboard\ninner_corners: [9, 6]\nsquare: 25\n", "t");
  WriteTargetSvg(board, dir.path() / "board.svg");
  std::ifstream in(dir.path() / "board.svg");
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  // 12 squares across with the margins: 300 mm by 225 mm.
  EXPECT_NE(text.find("width=\"300mm\" height=\"225mm\""), std::string::npos) << text.substr(0, 200);
  EXPECT_NE(text.find("<polygon"), std::string::npos);
}

}  // namespace
}  // namespace tumbletrace
