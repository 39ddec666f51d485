// Where the free-flight model holds and where it breaks: the residuals per frame and per
// marker, the CM's acceleration against the vacuum model over time, a runs test of the
// residuals' whiteness, the gravity check of scale and timing, and flags that name the
// frames where the model breaks, each with a sentence a user can act on.
#pragma once

#include <Eigen/Core>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/window.hpp"
#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

struct FrameDiagnostics {
  int frame = 0;
  double time_s = 0.0;
  int sightings = 0;           // inliers in the fit's window
  double rms_px = 0.0;         // of their residual components
  // The CM's position from this frame's sightings alone (the fitted orientation and CM
  // held), and its acceleration minus gravity from a local quadratic over neighbouring
  // frames: zero in vacuum up to noise; the air's drag shows as a deceleration.
  std::optional<Eigen::Vector3d> cm_world_m;
  std::optional<Eigen::Vector3d> accel_residual_mps2;
};

struct MarkerDiagnostics {
  int marker_id = 0;
  int sightings = 0;
  int outliers = 0;
  double rms_px = 0.0;   // inliers
  double max_px = 0.0;   // largest residual, any sighting
};

// Wald-Wolfowitz runs test on the signs of each marker's residual components in time
// order, pooled over markers and coordinates (Wald and Wolfowitz 1940; common practice),
// with the pooled lag-1 autocorrelation. Too few runs: the residuals are correlated in
// time (a model error, or video compression), and the reported sigmas are optimistic.
struct RunsTest {
  int runs = 0;
  double expected_runs = 0.0;
  double z = 0.0;
  double lag1_autocorrelation = 0.0;
  // (1 + rho) / (1 - rho): the factor by which correlated noise inflates the variance of
  // a mean over many frames (an AR(1) approximation).
  double variance_factor = 1.0;
  bool white = true;
  std::string sentence;
};

// The estimated gravity against the session's: a wrong capture rate scales it by the
// square of the rate's error, a wrong length scale by the scale's error.
struct GravityCheck {
  bool performed = false;
  double expected_mps2 = 0.0;
  double estimated_mps2 = 0.0;
  double sigma_mps2 = 0.0;
  double z = 0.0;
  double ratio = 1.0;                  // estimated / expected
  double implied_capture_fps_factor = 1.0;  // true rate / stated rate, if the scale is right
  bool flagged = false;
  std::string sentence;
};

struct BreakFlag {
  std::string kind;  // release, impact, contact, marker, frames, air, correlated-residuals, gravity
  std::optional<int> first_frame;
  std::optional<int> last_frame;
  std::string sentence;
};

struct Diagnostics {
  FreeFlightWindow window;
  std::vector<FrameDiagnostics> frames;
  int acceleration_smoothing_frames = 0;
  std::vector<MarkerDiagnostics> markers;
  RunsTest runs;
  GravityCheck gravity;
  std::vector<BreakFlag> flags;
};

struct DiagnoseOptions {
  Eigen::Vector3d expected_gravity_mps2 = {0, 0, -9.80665};  // the session's
  bool check_gravity = false;            // the fit estimated all of g (--estimate-gravity)
  double gravity_z_limit = 3.0;          // the check flags beyond this many sigma ...
  double gravity_relative_limit = 2e-3;  // ... and this relative difference
  double runs_z_limit = 3.0;
  int marker_run_frames = 3;             // outliers of one marker in a row that make a flag
};

Diagnostics Diagnose(const FitResult& fit, const FreeFlightWindow& window, const Body& body,
                     const std::vector<Camera>& cameras, const DiagnoseOptions& options);

}  // namespace tumbletrace
