// Rendered images of a printed pattern through the lens (sim/render_board.hpp).
#include "tumbletrace/sim/render_board.hpp"

#include <gtest/gtest.h>

#include <cmath>

namespace tumbletrace {
namespace {

CameraIntrinsics Lens() {
  CameraIntrinsics k;
  k.width_px = 320;
  k.height_px = 240;
  k.fx_px = 400;
  k.fy_px = 400;
  k.cx_px = 159.5;
  k.cy_px = 119.5;
  k.distortion = {-0.2, 0.05, 0, 0, 0};
  return k;
}

// Two black squares of 0.1 m, 1 m in front of the camera, the board head-on.
TEST(RenderBoard, PaintsTheProjectedPolygonsBlackOnWhite) {
  const std::vector<std::vector<Eigen::Vector2d>> squares = {
      {{-0.1, -0.1}, {0, -0.1}, {0, 0}, {-0.1, 0}}, {{0, 0}, {0.1, 0}, {0.1, 0.1}, {0, 0.1}}};
  RigidTransform pose;
  pose.translation_m = Eigen::Vector3d(0, 0, 1.0);
  BoardImageSettings settings;
  settings.noise_sigma_levels = 0.0;
  const cv::Mat image = RenderBoardImage(squares, Lens(), pose, settings);
  ASSERT_EQ(image.cols, 320);
  ASSERT_EQ(image.rows, 240);
  // Square centres at (-0.05, -0.05) and (0.05, 0.05): about 20 px from the centre.
  Eigen::Vector2d centre;
  ASSERT_TRUE(ProjectBoardPoint(Eigen::Vector3d(-0.05, -0.05, 0), Lens(), pose, &centre));
  EXPECT_NEAR(image.at<unsigned char>(std::lround(centre.y()), std::lround(centre.x())), 25, 1);
  ASSERT_TRUE(ProjectBoardPoint(Eigen::Vector3d(0.05, -0.05, 0), Lens(), pose, &centre));
  EXPECT_NEAR(image.at<unsigned char>(std::lround(centre.y()), std::lround(centre.x())), 210, 1);
  // The common corner falls on the principal point (159.5, 119.5), between four pixels: the
  // two diagonal ones in the squares are black, the other two white.
  EXPECT_NEAR(image.at<unsigned char>(119, 159), 25, 1);
  EXPECT_NEAR(image.at<unsigned char>(120, 160), 25, 1);
  EXPECT_NEAR(image.at<unsigned char>(119, 160), 210, 1);
  EXPECT_NEAR(image.at<unsigned char>(120, 159), 210, 1);
}

TEST(RenderBoard, EdgesFollowTheDistortedImageOfAStraightLine) {
  // A long thin bar across the image: with barrel distortion its image bows; the bar's
  // middle and ends lie where the point projection puts them.
  const std::vector<std::vector<Eigen::Vector2d>> bar = {
      {{-0.35, 0.1}, {0.35, 0.1}, {0.35, 0.12}, {-0.35, 0.12}}};
  RigidTransform pose;
  pose.translation_m = Eigen::Vector3d(0, 0, 1.0);
  BoardImageSettings settings;
  settings.noise_sigma_levels = 0.0;
  const cv::Mat image = RenderBoardImage(bar, Lens(), pose, settings);
  for (double x : {-0.3, 0.0, 0.3}) {
    Eigen::Vector2d inside;
    ASSERT_TRUE(ProjectBoardPoint(Eigen::Vector3d(x, 0.11, 0), Lens(), pose, &inside));
    EXPECT_LT(image.at<unsigned char>(std::lround(inside.y()), std::lround(inside.x())), 60) << x;
  }
}

TEST(RenderBoard, PolygonsBehindTheCameraAreLeftOut) {
  const std::vector<std::vector<Eigen::Vector2d>> square = {{{-1, -1}, {1, -1}, {1, 1}, {-1, 1}}};
  RigidTransform pose;
  pose.translation_m = Eigen::Vector3d(0, 0, -1.0);
  BoardImageSettings settings;
  settings.noise_sigma_levels = 0.0;
  const cv::Mat image = RenderBoardImage(square, Lens(), pose, settings);
  double low = 0, high = 0;
  cv::minMaxLoc(image, &low, &high);
  EXPECT_EQ(low, 210);
  EXPECT_EQ(high, 210);
}

}  // namespace
}  // namespace tumbletrace
