// The visible and shadowed fractions of a marker's image, in scenes whose answers follow
// from their geometry.
#include "tumbletrace/sim/marker_image.hpp"

#include <gtest/gtest.h>

namespace tumbletrace {
namespace {

CameraIntrinsics Pinhole() {
  CameraIntrinsics k;
  k.width_px = 201;
  k.height_px = 161;
  k.fx_px = k.fy_px = 800.0;
  k.cx_px = 100.0;
  k.cy_px = 80.0;
  return k;
}

SceneSolid Ball(const Eigen::Vector3d& c, double r, int marker) {
  SceneSolid solid;
  solid.primitive.shape = RayShape::kSphere;
  solid.primitive.center_camera_m = c;
  solid.primitive.half_size_m = {r, r, 0};
  solid.surface = marker >= 0 ? SurfaceKind::kGlossyMarker : SurfaceKind::kBody;
  solid.marker = marker;
  return solid;
}

SceneSolid Block(const Eigen::Vector3d& c, const Eigen::Vector3d& half) {
  SceneSolid solid;
  solid.primitive.shape = RayShape::kBox;
  solid.primitive.center_camera_m = c;
  solid.primitive.half_size_m = half;
  return solid;
}

RayScene SceneOf(std::vector<SceneSolid> solids, const Eigen::Vector3d& towards_light = {0, 0, -1}) {
  RayScene scene;
  scene.solids = std::move(solids);
  scene.towards_light_camera = towards_light.normalized();
  return scene;
}

constexpr MarkerImageOptions kAll{true, true, 48};

TEST(SampleMarkerImage, AFreeMarkerIsWhollyVisibleAndLit) {
  const MarkerImageFractions f = SampleMarkerImage(SceneOf({Ball({0, 0, 1}, 0.01, 0)}), 0, Pinhole(), kAll);
  EXPECT_DOUBLE_EQ(f.visible, 1.0);
  EXPECT_DOUBLE_EQ(f.shadowed, 0.0);
}

TEST(SampleMarkerImage, MarkerExactlyBehindAPartIsWhollyHidden) {
  const RayScene scene = SceneOf({Block({0, 0, 0.8}, {0.03, 0.03, 0.01}), Ball({0, 0, 1}, 0.01, 0)});
  EXPECT_DOUBLE_EQ(SampleMarkerImage(scene, 1, Pinhole(), kAll).visible, 0.0);
  EXPECT_DOUBLE_EQ(SampleMarkerImage(scene, 1, Pinhole(), {false, true, 48}).visible, 1.0);
}

TEST(SampleMarkerImage, PartCoveringHalfTheImageHidesHalf) {
  // The block's edge X = 0 runs through the ball's image centre (the ball on the axis).
  const RayScene scene = SceneOf({Block({0.05, 0, 0.8}, {0.05, 0.05, 0.01}), Ball({0, 0, 1}, 0.01, 0)});
  EXPECT_NEAR(SampleMarkerImage(scene, 1, Pinhole(), kAll).visible, 0.5, 0.02);
}

TEST(SampleMarkerImage, NearerMarkerHidesAFartherOne) {
  const RayScene scene = SceneOf({Ball({0, 0, 1.0}, 0.01, 0), Ball({0, 0, 1.1}, 0.01, 1)});
  EXPECT_DOUBLE_EQ(SampleMarkerImage(scene, 1, Pinhole(), kAll).visible, 0.0);
  EXPECT_DOUBLE_EQ(SampleMarkerImage(scene, 0, Pinhole(), kAll).visible, 1.0);
}

TEST(SampleMarkerImage, CastShadowCoversTheSideFacingTheLight) {
  // Light from +x blocked by a block on the ball's right: the lit half is in shadow; the
  // other half faces away from the light and is not counted as shadowed.
  const RayScene scene = SceneOf({Ball({0, 0, 1}, 0.01, 0), Block({0.1, 0, 1}, {0.02, 0.05, 0.05})}, {1, 0, 0});
  const MarkerImageFractions f = SampleMarkerImage(scene, 0, Pinhole(), kAll);
  EXPECT_DOUBLE_EQ(f.visible, 1.0);
  EXPECT_NEAR(f.shadowed, 0.5, 0.03);
  EXPECT_DOUBLE_EQ(SampleMarkerImage(scene, 0, Pinhole(), {true, false, 48}).shadowed, 0.0);
}

TEST(SampleMarkerImage, SphereHalfOutOfTheFrame) {
  // Centre projected onto the left border of the image (x = -0.5 px).
  const Eigen::Vector3d c(-100.5 / 800.0, 0, 1.0);
  EXPECT_NEAR(SampleMarkerImage(SceneOf({Ball(c, 0.01, 0)}), 0, Pinhole(), kAll).visible, 0.5, 0.02);
}

TEST(SampleMarkerImage, DiscSeenFromBehindAndSolidsAtTheCameraHaveNoImage) {
  SceneSolid disc;
  disc.primitive.shape = RayShape::kDisc;
  disc.primitive.center_camera_m = {0, 0, 1};
  disc.primitive.half_size_m = {0.01, 0.01, 0};  // normal +z: turned away from the camera
  disc.marker = 0;
  const MarkerImageFractions behind = SampleMarkerImage(SceneOf({disc}), 0, Pinhole(), kAll);
  EXPECT_DOUBLE_EQ(behind.visible, 0.0);
  disc.primitive.axes_camera = Eigen::Vector3d(1, -1, -1).asDiagonal();  // normal -z: facing it
  EXPECT_DOUBLE_EQ(SampleMarkerImage(SceneOf({disc}), 0, Pinhole(), kAll).visible, 1.0);
  EXPECT_DOUBLE_EQ(SampleMarkerImage(SceneOf({Ball({0, 0, 0.005}, 0.01, 0)}), 0, Pinhole(), kAll).visible, 0.0);
}

}  // namespace
}  // namespace tumbletrace
