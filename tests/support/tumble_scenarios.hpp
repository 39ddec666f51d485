// Invented scenarios of a body tumbling in three dimensions: a paddle-like board with a
// grip under it and a steel weight through it near one corner (three distinct principal
// moments, principal axes turned away from the board's edges), marked with flat dots on
// both faces, so that markers turn away from the camera and come back. Values are made up
// for the tests.
#pragma once

#include <Eigen/Geometry>
#include <cmath>

#include "support/scenarios.hpp"
#include "tumbletrace/model/mass_properties.hpp"
#include "tumbletrace/sim/scenario.hpp"

namespace tumbletrace::testing {

// Body frame: x along the board from its grip end, z out of the face marked 1-4.
inline Body PaddleBody() {
  Body body;
  const double mm = 1e-3;
  struct Dot {
    Eigen::Vector3d at_mm;
    Eigen::Vector3d normal;
  };
  const Dot dots[] = {{{20, 30, 8}, Eigen::Vector3d::UnitZ()},   {{130, -35, 8}, Eigen::Vector3d::UnitZ()},
                      {{230, 30, 8}, Eigen::Vector3d::UnitZ()},  {{265, -25, 8}, Eigen::Vector3d::UnitZ()},
                      {{30, -30, -8}, -Eigen::Vector3d::UnitZ()}, {{120, 35, -8}, -Eigen::Vector3d::UnitZ()},
                      {{215, -30, -8}, -Eigen::Vector3d::UnitZ()}, {{270, 25, -8}, -Eigen::Vector3d::UnitZ()}};
  int id = 1;
  for (const Dot& d : dots) {
    Marker m;
    m.id = id++;
    m.at_body_m = d.at_mm * mm;
    m.diameter_m = 8 * mm;
    m.normal_body = d.normal;
    body.markers.push_back(m);
  }
  body.references_body_m["grip_end"] = Eigen::Vector3d::Zero();
  Part board;
  board.shape = PartShape::kBox;
  board.name = "board";
  board.center_body_m = Eigen::Vector3d(140 * mm, 0, 0);
  board.size_m = Eigen::Vector3d(280 * mm, 90 * mm, 16 * mm);
  board.density_kgpm3 = 600;  // plywood, invented
  Part weight;
  weight.shape = PartShape::kBox;
  weight.name = "weight";
  weight.center_body_m = Eigen::Vector3d(60 * mm, 30 * mm, 0);
  weight.size_m = Eigen::Vector3d(40 * mm, 24 * mm, 40 * mm);
  weight.density_kgpm3 = 7850;  // steel
  Part grip;
  grip.shape = PartShape::kCylinder;
  grip.name = "grip";
  grip.from_body_m = Eigen::Vector3d(0, 0, -23 * mm);
  grip.axis_body = Eigen::Vector3d::UnitX();
  grip.length_m = 120 * mm;
  grip.diameter_m = 30 * mm;
  grip.density_kgpm3 = 900;  // a hard rubber, invented
  body.parts = {board, weight, grip};
  return body;
}

// Common launch: the marked face 1-4 towards the camera, 0.4 s at 1000 frames/s.
inline Scenario PaddleScenario(const Eigen::Vector3d& omega_body_radps, double tracks_sigma_px,
                               std::uint64_t seed) {
  Scenario s;
  s.body = PaddleBody();
  s.camera = ObliqueCamera();
  s.capture_fps = 1000;
  s.frames = 400;
  s.launch_cm_world_m = Eigen::Vector3d(-0.5, 0.0, -0.1);
  s.launch_velocity_world_mps = Eigen::Vector3d(2.5, 0.0, 2.5);
  s.launch_world_from_body = Eigen::AngleAxisd(M_PI / 2, Eigen::Vector3d::UnitX()) *
                             Eigen::AngleAxisd(0.3, Eigen::Vector3d::UnitZ());
  s.launch_omega_body_radps = omega_body_radps;
  s.tracks_sigma_px = tracks_sigma_px;
  s.seed = seed;
  s.video.write = false;
  return s;
}

// (a) A wobbling spin about the largest axis (the board's normal): 6 rev/s with a
// transverse component of 5 rad/s, seen by the oblique camera with lens distortion.
inline Scenario WobbleScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1) {
  return PaddleScenario({4.0, 3.0, 2 * M_PI * 6.0}, tracks_sigma_px, seed);
}

// (b) A spin about the intermediate axis (across the board) at 4 rev/s with a small
// perturbation: the board flips over and back within the window.
inline Scenario FlipScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1) {
  return PaddleScenario({0.8, 2 * M_PI * 4.0, 0.8}, tracks_sigma_px, seed);
}

// (c) A symmetric body: a square bar, 280 x 60 x 60 mm (two equal principal moments about
// its cross axes), with eight markers seen from every side (small spheres), spinning about
// its long axis at 5 rev/s and coning (a transverse 5 rad/s): a precessing symmetric top.
inline Scenario SymmetricBarScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1) {
  Scenario s = PaddleScenario({2 * M_PI * 5.0, 5.0, 1.0}, tracks_sigma_px, seed);
  const double mm = 1e-3;
  Body body;
  const Eigen::Vector3d at_mm[] = {{10, 30, 20},  {80, -30, -10}, {150, 20, 30},  {220, -10, -30},
                                   {270, 30, -20}, {40, -20, 30},  {190, 30, 10},  {120, 10, -30}};
  int id = 1;
  for (const auto& p : at_mm) {
    Marker m;
    m.id = id++;
    m.at_body_m = p * mm;
    m.diameter_m = 8 * mm;
    body.markers.push_back(m);
  }
  Part bar;
  bar.shape = PartShape::kBox;
  bar.name = "bar";
  bar.center_body_m = Eigen::Vector3d(140 * mm, 0, 0);
  bar.size_m = Eigen::Vector3d(280 * mm, 60 * mm, 60 * mm);
  bar.density_kgpm3 = 600;
  body.parts = {bar};
  s.body = body;
  return s;
}

// A light foam paddle with strong drag (invented): the paddle's markers and shapes in foam
// (board 100 kg/m^3, grip 110 kg/m^3) with a denser insert (800 kg/m^3) near one corner,
// 59 g in all, and an aerodynamic reference area of 0.015 m^2 (about half the board's face:
// the mean area a tumbling board shows to the air). Dots of 16 mm, to show on a wide lens.
inline Body FoamPaddleBody() {
  Body body = PaddleBody();
  const double mm = 1e-3;
  for (Marker& m : body.markers) m.diameter_m = 16 * mm;  // 3.7 px across at 3 m
  body.parts[0].density_kgpm3 = 100;
  body.parts[1].name = "insert";
  body.parts[1].size_m = Eigen::Vector3d(30 * mm, 20 * mm, 20 * mm);
  body.parts[1].density_kgpm3 = 800;
  body.parts[2].density_kgpm3 = 110;
  body.reference_area_m2 = 0.015;
  body.reference_length_m = 0.28;
  return body;
}

// A wide-angle camera (fx = 700 px at 1024 x 768, slight barrel distortion k1 = -0.05)
// 3 m from the throw, turned 15 degrees about the vertical and looking slightly down.
inline Camera WideCamera() {
  Camera camera = FacingCamera();
  camera.intrinsics.fx_px = 700;
  camera.intrinsics.fy_px = 700;
  camera.intrinsics.distortion = {-0.05, 0.0, 0.0, 0.0, 0.0};
  const double turn = 15 * M_PI / 180;
  camera.camera_from_world = LookingAt(Eigen::Vector3d(-3.0 * std::sin(turn), -3.0 * std::cos(turn), 0.5),
                                       Eigen::Vector3d(0.0, 0.0, 0.1));
  return camera;
}

// The foam paddle thrown at 9 m/s and tumbling freely (9.3 rev/s about an axis far from
// every principal axis, so that it shows one face and then the other), 300 frames at 1000 frames/s, through still air with C_d = 0.8 at
// 1.2 kg/m^3: k = rho C_d A / (2 m) = 0.12 1/m, a deceleration of about 10 m/s^2 at launch,
// comparable to g. Seen by the wide-angle camera with 0.05 px of noise on the tracks.
inline Scenario FoamPaddleScenario(double tracks_sigma_px = 0.05, std::uint64_t seed = 1) {
  Scenario s = PaddleScenario({30.0, 40.0, 30.0}, tracks_sigma_px, seed);
  s.body = FoamPaddleBody();
  s.camera = WideCamera();
  s.frames = 300;
  s.launch_cm_world_m = Eigen::Vector3d(-1.2, 0.0, -0.4);
  s.launch_velocity_world_mps = Eigen::Vector3d(8.0, 0.0, 4.0);
  s.aero.cd = 0.8;
  s.aero.density_kgpm3 = 1.2;
  const double mass_kg = CombineParts(s.body.parts).mass_kg;
  s.aero.k_per_m = 1.2 * 0.8 * *s.body.reference_area_m2 / (2 * mass_kg);
  return s;
}

}  // namespace tumbletrace::testing
