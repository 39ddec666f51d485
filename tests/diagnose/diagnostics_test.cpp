// The diagnostics against the simulator's truth: the gravity check catches a wrong capture
// rate, the residuals of a clean throw pass the runs test, a misidentified marker is named
// with its frames, and the CM's acceleration residual shows the air's drag.
#include "tumbletrace/diagnose/diagnostics.hpp"

#include <gtest/gtest.h>

#include "support/air_scenarios.hpp"
#include "support/fit_helpers.hpp"

namespace tumbletrace {
namespace {

struct Diagnosed {
  Simulation sim;
  FitResult fit;
  Diagnostics diagnostics;
};

Diagnosed FitAndDiagnose(const Scenario& s, FitOptions options, double stated_fps,
                         std::vector<TrackPoint>* tracks_override = nullptr) {
  Diagnosed d;
  d.sim = SimulateFlight(s);
  const std::vector<TrackPoint>& tracks = tracks_override ? *tracks_override : d.sim.tracks;
  d.fit = FitFreeFlight(GroupByFrame(tracks, stated_fps), s.body, s.camera, options);
  DiagnoseOptions diagnose;
  diagnose.expected_gravity_mps2 = options.gravity_world_mps2;
  diagnose.check_gravity = options.gravity_mode == GravityMode::kEstimate;
  d.diagnostics = Diagnose(d.fit, FreeFlightWindow{}, s.body, {s.camera}, diagnose);
  return d;
}

bool HasFlag(const Diagnostics& d, const std::string& kind) {
  for (const BreakFlag& f : d.flags) {
    if (f.kind == kind) return true;
  }
  return false;
}

// A session that states 1 % too high a capture rate shrinks every time by 1 %, so the
// estimated g comes out 2 % high (accelerations scale with the rate squared): flagged, with
// the rate's factor recovered (true / stated = 1 / 1.01). The right rate passes.
TEST(DiagnosticsTest, GravityCheckFlagsACaptureRateOnePercentOff) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 21);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  options.drag = DragChoice::kNone;
  options.gravity_mode = GravityMode::kEstimate;
  const Diagnosed wrong = FitAndDiagnose(s, options, 1.01 * s.capture_fps);
  const GravityCheck& g = wrong.diagnostics.gravity;
  ASSERT_TRUE(g.performed);
  std::printf("rate +1 %%: g %.4f +/- %.4f (ratio %.4f, z %.1f), implied rate factor %.4f\n  %s\n",
              g.estimated_mps2, g.sigma_mps2, g.ratio, g.z, g.implied_capture_fps_factor,
              g.sentence.c_str());
  EXPECT_TRUE(g.flagged);
  EXPECT_TRUE(HasFlag(wrong.diagnostics, "gravity"));
  EXPECT_NEAR(g.ratio, 1.01 * 1.01, 3 * g.sigma_mps2 / g.expected_mps2);
  EXPECT_NEAR(g.implied_capture_fps_factor, 1.0 / 1.01, 0.002);

  const Diagnosed right = FitAndDiagnose(s, options, s.capture_fps);
  EXPECT_FALSE(right.diagnostics.gravity.flagged) << right.diagnostics.gravity.sentence;
  EXPECT_FALSE(HasFlag(right.diagnostics, "gravity"));
}

// Independent noise passes the runs test and raises no flag; the acceleration residual
// of a throw in vacuum is zero within its scatter.
TEST(DiagnosticsTest, CleanThrowIsWhiteAndUnflagged) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 22);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  const Diagnosed d = FitAndDiagnose(s, options, s.capture_fps);
  std::printf("%s\n", d.diagnostics.runs.sentence.c_str());
  EXPECT_TRUE(d.diagnostics.runs.white);
  EXPECT_TRUE(d.diagnostics.flags.empty()) << d.diagnostics.flags.front().sentence;
  Eigen::Vector3d mean = Eigen::Vector3d::Zero();
  Eigen::Vector3d mean_sq = Eigen::Vector3d::Zero();
  int n = 0;
  for (const FrameDiagnostics& f : d.diagnostics.frames) {
    if (!f.accel_residual_mps2) continue;
    mean += *f.accel_residual_mps2;
    mean_sq += f.accel_residual_mps2->cwiseProduct(*f.accel_residual_mps2);
    ++n;
  }
  ASSERT_GT(n, 100);
  mean /= n;
  const Eigen::Vector3d sd = (mean_sq / n - mean.cwiseProduct(mean)).cwiseSqrt();
  std::printf("vacuum: mean acceleration residual [%.3f, %.3f, %.3f] m/s^2, scatter [%.3f, %.3f, %.3f]\n",
              mean.x(), mean.y(), mean.z(), sd.x(), sd.y(), sd.z());
  // Neighbouring values share most of their frames: the mean's scatter is near sd itself.
  for (int i = 0; i < 3; ++i) EXPECT_LT(std::abs(mean[i]), sd[i] + 0.05);
}

// Marker 3 swapped with marker 4 over frames 100-111 (a misidentification): the flag
// names marker 3 (or 4) and those frames.
TEST(DiagnosticsTest, MisidentifiedMarkerIsNamedWithItsFrames) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 23);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  options.drag = DragChoice::kNone;
  std::vector<TrackPoint> tracks = SimulateFlight(s).tracks;
  for (TrackPoint& p : tracks) {
    if (p.frame < 100 || p.frame > 111 || !p.marker) continue;
    if (*p.marker == 3) {
      p.marker = 4;
    } else if (*p.marker == 4) {
      p.marker = 3;
    }
  }
  const Diagnosed d = FitAndDiagnose(s, options, s.capture_fps, &tracks);
  bool named = false;
  for (const BreakFlag& f : d.diagnostics.flags) {
    if (f.kind != "marker") continue;
    std::printf("%s\n", f.sentence.c_str());
    named |= f.first_frame && *f.first_frame >= 99 && *f.first_frame <= 101 && f.last_frame &&
             *f.last_frame >= 110 && *f.last_frame <= 112;
  }
  EXPECT_TRUE(named);
}

// The light ball's drag shows in the acceleration residual as a deceleration along -v of
// about k |v|^2 (2.4 m/s^2 at launch).
TEST(DiagnosticsTest, AccelerationResidualShowsTheDrag) {
  const Scenario s = testing::FoamBallScenario(0.2, 24);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  const Diagnosed d = FitAndDiagnose(s, options, s.capture_fps);
  EXPECT_TRUE(HasFlag(d.diagnostics, "air"));
  double along = 0.0, expected = 0.0;
  int n = 0;
  for (const FrameDiagnostics& f : d.diagnostics.frames) {
    if (!f.accel_residual_mps2) continue;
    const Eigen::Vector3d v = d.fit.parameters.VelocityAt(f.time_s);
    along += f.accel_residual_mps2->dot(-v.normalized());
    expected += s.aero.k_per_m * v.squaredNorm();
    ++n;
  }
  ASSERT_GT(n, 100);
  std::printf("drag: mean deceleration along -v %.3f m/s^2, expected %.3f\n", along / n, expected / n);
  EXPECT_NEAR(along / n, expected / n, 0.25 * expected / n);
}

}  // namespace
}  // namespace tumbletrace
