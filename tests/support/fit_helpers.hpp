// Simulate a scenario and fit its tracks: the end-to-end recovery used by the fit tests.
#pragma once

#include <random>

#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/summary.hpp"
#include "tumbletrace/sim/simulate.hpp"

namespace tumbletrace::testing {

struct Recovery {
  Simulation sim;
  FitResult fit;
  FlightSummary summary;
};

inline FitOptions DefaultFitOptions(const Scenario& s) {
  FitOptions o;
  o.gravity_world_mps2 = s.gravity_world_mps2;
  return o;
}

// Replaces `fraction` of the track points by gross outliers: 15-60 px away in a random
// direction (a glint or a swapped marker), with a fixed seed.
inline int CorruptTracks(std::vector<TrackPoint>* tracks, double fraction, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  int n = 0;
  for (TrackPoint& p : *tracks) {
    if (unit(rng) >= fraction) continue;
    const double angle = 2 * M_PI * unit(rng), distance = 15 + 45 * unit(rng);
    p.x_px += distance * std::cos(angle);
    p.y_px += distance * std::sin(angle);
    ++n;
  }
  return n;
}

// Fits `r->sim`'s tracks with every camera of its scenario and summarises the fit.
inline void FitSimulatedTracks(const FitOptions& options, Recovery* r) {
  const Scenario& s = r->sim.scenario;
  std::vector<Camera> cameras;
  for (const ScenarioCamera& c : s.FilmingCameras()) cameras.push_back(c.camera);
  const std::vector<double> rates(cameras.size(), s.capture_fps);
  r->fit = FitFreeFlight(GroupByFrame(r->sim.tracks, rates), s.body, cameras, options);
  r->summary = Summarise(r->fit, s.body);
}

// Every camera of the scenario takes part; the fit's clock offsets are those of `options`.
inline Recovery SimulateAndFit(const Scenario& s, const FitOptions& options,
                               double outlier_fraction = 0.0) {
  Recovery r;
  r.sim = SimulateFlight(s);
  if (outlier_fraction > 0) CorruptTracks(&r.sim.tracks, outlier_fraction, s.seed + 77);
  FitSimulatedTracks(options, &r);
  return r;
}

// A throw fitted twice with the constant spin: with the camera's true pose, and on the same
// tracks without it (the camera frame as the world, gravity's direction estimated, its
// magnitude given; started straight down the image).
struct PosedAndPoseless {
  Recovery posed;
  FitResult poseless;
  FlightSummary poseless_summary;
  Eigen::Vector3d gravity_camera_mps2;  // the true gravity in the camera frame
};

inline PosedAndPoseless FitWithAndWithoutPose(const Scenario& s) {
  PosedAndPoseless out;
  FitOptions posed_options = DefaultFitOptions(s);
  posed_options.rotation = RotationChoice::kConstantSpin;
  out.posed = SimulateAndFit(s, posed_options);
  Camera camera = s.camera;
  out.gravity_camera_mps2 = camera.camera_from_world->rotation * s.gravity_world_mps2;
  camera.camera_from_world.reset();
  FitOptions o;
  o.rotation = RotationChoice::kConstantSpin;
  o.gravity_mode = GravityMode::kDirection;
  o.gravity_world_mps2 = Eigen::Vector3d(0, s.gravity_world_mps2.norm(), 0);
  out.poseless = FitFreeFlight(GroupByFrame(out.posed.sim.tracks, {s.capture_fps}), s.body, camera, o);
  out.poseless_summary = Summarise(out.poseless, s.body);
  return out;
}

}  // namespace tumbletrace::testing
