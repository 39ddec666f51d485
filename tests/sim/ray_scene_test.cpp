// The body's parts and markers placed in the camera frame for the ray caster.
#include "tumbletrace/sim/ray_scene.hpp"

#include <gtest/gtest.h>

#include "support/scenarios.hpp"

namespace tumbletrace {
namespace {

// The hammer with its CM at (0, 0, 2) in front of a camera whose frame is the world's, the
// body turned 90 degrees about z.
struct Placed {
  Body body = testing::HammerBody();
  Eigen::Vector3d cm_body_m{0.1, 0.0, 0.0};
  RigidState state;
  RigidTransform camera_from_world;
  Placed() {
    state.cm_world_m = {0, 0, 2};
    state.world_from_body = Eigen::AngleAxisd(M_PI / 2, Eigen::Vector3d::UnitZ());
  }
  Eigen::Vector3d Camera(const Eigen::Vector3d& at_body_m) const {
    return state.cm_world_m + state.world_from_body * (at_body_m - cm_body_m);
  }
};

TEST(BodyRayScene, PartsThenMarkersWhereTheBodyPutsThem) {
  const Placed p;
  const RayScene scene = BodyRayScene(p.body, p.cm_body_m, p.state, p.camera_from_world,
                                      MarkerMaterial::kMatte, Eigen::Vector3d(0, 0, -2), {});
  ASSERT_EQ(scene.solids.size(), p.body.parts.size() + p.body.markers.size());
  EXPECT_NEAR((scene.towards_light_camera - Eigen::Vector3d(0, 0, -1)).norm(), 0.0, 1e-12);
  // The handle: a cylinder from the grip end along body x, 270 mm; its middle at x = 135 mm.
  const SceneSolid& handle = scene.solids[0];
  EXPECT_EQ(handle.primitive.shape, RayShape::kCylinder);
  EXPECT_EQ(handle.marker, -1);
  EXPECT_EQ(handle.surface, SurfaceKind::kBody);
  EXPECT_NEAR((handle.primitive.center_camera_m - p.Camera({0.135, 0, 0})).norm(), 0.0, 1e-12);
  EXPECT_NEAR((handle.primitive.axes_camera.col(2) - Eigen::Vector3d(0, 1, 0)).norm(), 0.0, 1e-12);
  EXPECT_NEAR(handle.primitive.half_size_m.z(), 0.135, 1e-12);
  EXPECT_NEAR(handle.primitive.radius_m(), 0.014, 1e-12);
  EXPECT_NEAR((handle.primitive.axes_camera.transpose() * handle.primitive.axes_camera -
               Eigen::Matrix3d::Identity()).norm(), 0.0, 1e-12);
  // The head: a box with its edges along the body's axes.
  const SceneSolid& head = scene.solids[1];
  EXPECT_EQ(head.primitive.shape, RayShape::kBox);
  EXPECT_NEAR((head.primitive.center_camera_m - p.Camera({0.285, 0, 0})).norm(), 0.0, 1e-12);
  EXPECT_NEAR((head.primitive.half_size_m - Eigen::Vector3d(0.015, 0.04, 0.011)).norm(), 0.0, 1e-12);
  // Marker 1: a flat dot with its normal along body z (world z here).
  const SceneSolid& dot = scene.solids[2];
  EXPECT_EQ(dot.primitive.shape, RayShape::kDisc);
  EXPECT_EQ(dot.marker, 0);
  EXPECT_EQ(dot.surface, SurfaceKind::kMatteMarker);
  EXPECT_NEAR((dot.primitive.center_camera_m - p.Camera(p.body.markers[0].at_body_m)).norm(), 0.0, 1e-12);
  EXPECT_NEAR((dot.primitive.axes_camera.col(2) - Eigen::Vector3d(0, 0, 1)).norm(), 0.0, 1e-12);
  EXPECT_NEAR(dot.primitive.radius_m(), 0.004, 1e-12);
}

TEST(BodyRayScene, BallMarkersPointMassesAndLeftOutMarkers) {
  Placed p;
  p.body = testing::HammerBody(false);
  Part lead;
  lead.shape = PartShape::kPointMass;
  lead.mass_kg = 0.01;
  p.body.parts.push_back(lead);
  const RayScene scene = BodyRayScene(p.body, p.cm_body_m, p.state, p.camera_from_world,
                                      MarkerMaterial::kRetro, Eigen::Vector3d::UnitZ(),
                                      {false, true, false, false, false, false});
  ASSERT_EQ(scene.solids.size(), 2u + 5u);  // no point mass, marker 2 left out
  EXPECT_EQ(scene.solids[2].primitive.shape, RayShape::kSphere);
  EXPECT_EQ(scene.solids[2].surface, SurfaceKind::kRetroMarker);
  EXPECT_EQ(MarkerSolidIndex(scene, 0), 2);
  EXPECT_EQ(MarkerSolidIndex(scene, 1), -1);
  EXPECT_EQ(MarkerSolidIndex(scene, 2), 3);
}

}  // namespace
}  // namespace tumbletrace
