// Invented test scenarios: a 300 mm hammer-like tool (wooden handle, steel head) thrown in
// front of one camera, or two. Values are made up for the tests; they describe no real product.
#pragma once

#include <Eigen/Geometry>
#include <cmath>

#include "tumbletrace/sim/scenario.hpp"

namespace tumbletrace::testing {

// Body frame: x along the handle from the grip end, z out of the marked face.
inline Body HammerBody(bool flat_dots = true) {
  Body body;
  const double mm = 1e-3;
  const Eigen::Vector3d at_mm[] = {{20, 0, 14}, {100, 0, 14}, {180, 0, 14},
                                   {250, 0, 14}, {285, 30, 11}, {285, -30, 11}};
  int id = 1;
  for (const auto& p : at_mm) {
    Marker m;
    m.id = id++;
    m.at_body_m = p * mm;
    m.diameter_m = 8 * mm;
    if (flat_dots) m.normal_body = Eigen::Vector3d::UnitZ();
    body.markers.push_back(m);
  }
  body.references_body_m["grip_end"] = Eigen::Vector3d::Zero();
  body.references_body_m["head_face"] = Eigen::Vector3d(300 * mm, 0, 0);
  Part handle;
  handle.shape = PartShape::kCylinder;
  handle.name = "handle";
  handle.from_body_m = Eigen::Vector3d::Zero();
  handle.axis_body = Eigen::Vector3d::UnitX();
  handle.length_m = 270 * mm;
  handle.diameter_m = 28 * mm;
  handle.density_kgpm3 = 700;  // a hardwood, invented
  Part head;
  head.shape = PartShape::kBox;
  head.name = "head";
  head.center_body_m = Eigen::Vector3d(285 * mm, 0, 0);
  head.size_m = Eigen::Vector3d(30 * mm, 80 * mm, 22 * mm);
  head.density_kgpm3 = 7850;  // steel
  body.parts = {handle, head};
  return body;
}

// Camera 3 m from the flight plane (world x-z, z up), facing it squarely.
inline Camera FacingCamera() {
  Camera camera;
  camera.intrinsics.width_px = 1024;
  camera.intrinsics.height_px = 768;
  camera.intrinsics.fx_px = 1400;
  camera.intrinsics.fy_px = 1400;
  camera.intrinsics.cx_px = 511.5;
  camera.intrinsics.cy_px = 383.5;
  camera.intrinsics.distortion = {-0.08, 0.02, 0.0, 0.0, 0.0};
  RigidTransform pose;
  pose.rotation << 1, 0, 0, 0, 0, -1, 0, 1, 0;  // x_cam = x, y_cam = -z, z_cam = y
  pose.translation_m = Eigen::Vector3d(0, 0, 3.0);
  camera.camera_from_world = pose;
  return camera;
}

// The pose of a camera at `centre_world` looking at `target_world`, its image rows level
// (world z up).
inline RigidTransform LookingAt(const Eigen::Vector3d& centre_world,
                                const Eigen::Vector3d& target_world) {
  const Eigen::Vector3d z_cam = (target_world - centre_world).normalized();
  const Eigen::Vector3d x_cam = z_cam.cross(Eigen::Vector3d::UnitZ()).normalized();
  const Eigen::Vector3d y_cam = z_cam.cross(x_cam);
  RigidTransform pose;
  pose.rotation.row(0) = x_cam;
  pose.rotation.row(1) = y_cam;
  pose.rotation.row(2) = z_cam;
  pose.translation_m = -pose.rotation * centre_world;
  return pose;
}

// The same camera turned 35 degrees about the vertical and 12 degrees down, placed so
// that the flight stays in view: an oblique view of the flight plane.
inline Camera ObliqueCamera() {
  Camera camera = FacingCamera();
  camera.intrinsics.distortion = {-0.12, 0.05, 3e-4, -2e-4, -0.01};
  const Eigen::Vector3d centre_world(-2.0 * std::sin(35 * M_PI / 180), -3.0 * std::cos(35 * M_PI / 180), 0.6);
  // Look towards the flight region's centre.
  camera.camera_from_world = LookingAt(centre_world, Eigen::Vector3d::Zero());
  return camera;
}

// A second view from the other side and from above (about 40 degrees off the facing
// camera's line of sight, 27 degrees down), with a distortion of its own.
inline Camera SecondObliqueCamera() {
  Camera camera = FacingCamera();
  camera.intrinsics.distortion = {-0.10, 0.03, -2e-4, 3e-4, 0.004};
  camera.camera_from_world = LookingAt(Eigen::Vector3d(1.6, -2.4, 1.5), Eigen::Vector3d::Zero());
  return camera;
}

// The central `width_px` x `height_px` window of a camera's image (a smaller sensor with the
// same lens): the same focal length, the principal point moved into the window.
inline Camera CentralWindow(Camera camera, int width_px, int height_px) {
  camera.intrinsics.cx_px -= 0.5 * (camera.intrinsics.width_px - width_px);
  camera.intrinsics.cy_px -= 0.5 * (camera.intrinsics.height_px - height_px);
  camera.intrinsics.width_px = width_px;
  camera.intrinsics.height_px = height_px;
  return camera;
}

// Planar spin about the body's z axis (its largest principal axis), the axis along the
// camera's line of sight: 1000 frames/s, 0.25 s, 5 rev/s.
inline Scenario PlanarSpinScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1) {
  Scenario s;
  s.body = HammerBody();
  s.camera = FacingCamera();
  s.capture_fps = 1000;
  s.frames = 250;
  s.launch_cm_world_m = Eigen::Vector3d(-0.40, 0.0, -0.15);
  s.launch_velocity_world_mps = Eigen::Vector3d(3.0, 0.0, 2.5);
  // Body z to world -y: the marked face looks at the camera.
  s.launch_world_from_body = Eigen::AngleAxisd(M_PI / 2, Eigen::Vector3d::UnitX()) *
                             Eigen::AngleAxisd(0.3, Eigen::Vector3d::UnitZ());
  s.launch_omega_body_radps = Eigen::Vector3d(0, 0, 2 * M_PI * 5.0);
  s.tracks_sigma_px = tracks_sigma_px;
  s.seed = seed;
  s.video.write = false;
  return s;
}

// The same throw seen by the oblique camera.
inline Scenario ObliqueSpinScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1) {
  Scenario s = PlanarSpinScenario(tracks_sigma_px, seed);
  s.camera = ObliqueCamera();
  return s;
}

// The planar throw filmed by two cameras: "front" (the facing camera, which sets the clock)
// and "side" (the second oblique view), whose frame i is exposed `side_offset_s` after the
// front camera's.
inline Scenario TwoCameraScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1,
                                  double side_offset_s = 0.0) {
  Scenario s = PlanarSpinScenario(tracks_sigma_px, seed);
  s.cameras = {{"front", "front_camera.yaml", FacingCamera(), 0.0},
               {"side", "side_camera.yaml", SecondObliqueCamera(), side_offset_s}};
  return s;
}

}  // namespace tumbletrace::testing
