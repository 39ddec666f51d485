// Invented test scenarios for flight through air and for the free-flight window: a light
// foam ball with a small weight inside, and the hammer of scenarios.hpp held before
// release and bouncing at the end. Values are made up for the tests.
#pragma once

#include <Eigen/Geometry>
#include <cmath>

#include "support/scenarios.hpp"
#include "tumbletrace/sim/scenario.hpp"

namespace tumbletrace::testing {

// A 100 mm foam ball (invented: 115 kg/m^3, about 60 g) with a 6 g weight 20 mm off its
// centre along body z, and eight spherical markers on its surface. Body frame at the ball's
// centre. Aerodynamic reference: the frontal area pi d^2 / 4 and the diameter.
inline Body FoamBallBody() {
  Body body;
  const double r = 0.05;
  const Eigen::Vector3d directions[] = {{1, 0, 0},  {-1, 0, 0}, {0, 1, 0},   {0, -1, 0},
                                        {0, 0, 1},  {0, 0, -1}, {1, 1, 1},   {-1, -1, 1}};
  int id = 1;
  for (const Eigen::Vector3d& d : directions) {
    Marker m;
    m.id = id++;
    m.at_body_m = r * d.normalized();
    m.diameter_m = 0.008;
    body.markers.push_back(m);
  }
  body.references_body_m["centre"] = Eigen::Vector3d::Zero();
  Part ball;
  ball.shape = PartShape::kSphere;
  ball.name = "foam";
  ball.diameter_m = 2 * r;
  ball.density_kgpm3 = 115;
  Part weight;
  weight.shape = PartShape::kPointMass;
  weight.name = "weight";
  weight.center_body_m = Eigen::Vector3d(0, 0, 0.02);
  weight.mass_kg = 0.006;
  body.parts = {ball, weight};
  body.reference_area_m2 = M_PI * r * r;
  body.reference_length_m = 2 * r;
  return body;
}

// The ball thrown across the facing camera at 8.4 m/s, filmed at 2000 frames/s for 0.2 s,
// spinning at 4 rev/s about body x
// (a principal axis, perpendicular to the weight's offset), through still air with a
// smooth sphere's subcritical drag coefficient, C_d = 0.47 (Hoerner, Fluid-Dynamic Drag,
// 1965 — from memory), at 1.2 kg/m^3: k = 0.0346 1/m.
inline Scenario FoamBallScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1,
                                 bool with_drag = true) {
  Scenario s;
  s.body = FoamBallBody();
  s.camera = FacingCamera();
  s.capture_fps = 2000;
  s.frames = 400;
  s.launch_cm_world_m = Eigen::Vector3d(-0.8, 0.0, -0.3);
  s.launch_velocity_world_mps = Eigen::Vector3d(8.0, 0.0, 2.5);
  s.launch_world_from_body = Eigen::AngleAxisd(0.4, Eigen::Vector3d(0.3, 1, 0.2).normalized());
  s.launch_omega_body_radps = Eigen::Vector3d(2 * M_PI * 4.0, 0, 0);
  if (with_drag) {
    s.aero.cd = 0.47;
    s.aero.density_kgpm3 = 1.2;
    const double mass_kg = 115 * 4.0 / 3.0 * M_PI * std::pow(0.05, 3) + 0.006;
    s.aero.k_per_m = 1.2 * 0.47 * *s.body.reference_area_m2 / (2 * mass_kg);
  }
  s.tracks_sigma_px = tracks_sigma_px;
  s.seed = seed;
  s.video.write = false;
  return s;
}

// The hammer's planar throw (scenarios.hpp) with a hand before release and a net after:
// held until 45 ms (frame 45) and pushed with 120 m/s^2 forwards and 60 m/s^2 upwards
// beyond gravity while turned at -400 rad/s^2 (body z); from 205 ms on it has hit a
// vertical net that sends it back at half its speed. The launch state is that at release.
// Free flight: frames 45 to 204.
inline Scenario HandAndNetScenario(double tracks_sigma_px = 0.2, std::uint64_t seed = 1) {
  Scenario s = PlanarSpinScenario(tracks_sigma_px, seed);
  ScenarioHand hand;
  hand.release_time_s = 0.0445;
  hand.acceleration_mps2 = Eigen::Vector3d(120, 0, 60);
  hand.angular_acceleration_body_radps2 = Eigen::Vector3d(0, 0, -400);
  s.hand = hand;
  ScenarioImpact net;
  net.time_s = 0.2045;
  net.normal_world = Eigen::Vector3d(-1, 0, 0);
  net.restitution = 0.5;
  net.spin_kept = 0.6;
  s.impact = net;
  return s;
}

}  // namespace tumbletrace::testing
