// The free-flight window found from the data: a throw held by the hand before release and
// stopped by a net, against the simulator's truth.
#include "tumbletrace/fit/window.hpp"

#include <gtest/gtest.h>

#include "support/air_scenarios.hpp"
#include "support/fit_helpers.hpp"

namespace tumbletrace {
namespace {

FitResult FitFrames(const Simulation& sim, const FitOptions& options) {
  return FitFreeFlight(GroupByFrame(sim.tracks, sim.scenario.capture_fps), sim.scenario.body,
                       sim.scenario.camera, options);
}

// The window within 2 frames of the truth at both ends, the start a smooth departure (the
// hand) and the end a velocity jump (the net); the CM from that window as good as from a
// clean clip of the same free flight.
TEST(WindowTest, HandBeforeReleaseAndNetAfterAreCut) {
  const Scenario s = testing::HandAndNetScenario(0.2, 11);
  const Simulation sim = SimulateFlight(s);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  const std::vector<FrameSightings> frames = GroupByFrame(sim.tracks, s.capture_fps);
  const FreeFlightWindow window = FindFreeFlightWindow(frames, s.body, {s.camera}, options);
  std::printf("window: %d (+/- %.1f) to %d (+/- %.1f) in %d fits; truth 45 to 204\n  %s\n  %s\n",
              window.start.frame, window.start.sigma_frames, window.end.frame,
              window.end.sigma_frames, window.fits, window.start.sentence.c_str(),
              window.end.sentence.c_str());
  EXPECT_NEAR(window.start.frame, 45, 2);
  EXPECT_NEAR(window.end.frame, 204, 2);
  EXPECT_FALSE(window.start.clip_edge);
  EXPECT_FALSE(window.end.clip_edge);
  EXPECT_FALSE(window.start.velocity_jump);
  EXPECT_TRUE(window.end.velocity_jump);

  options.first_frame = window.start.frame;
  options.last_frame = window.end.frame;
  const FitResult fit = FitFrames(sim, options);
  const FlightSummary summary = Summarise(fit, s.body);
  // The clean clip: the same throw with no hand and no net, fitted over the same frames.
  Scenario clean = s;
  clean.hand.reset();
  clean.impact.reset();
  clean.launch_cm_world_m = sim.frames[45].state.cm_world_m;
  clean.launch_velocity_world_mps = sim.frames[45].state.velocity_world_mps;
  clean.launch_world_from_body = sim.frames[45].state.world_from_body;
  clean.launch_omega_body_radps = sim.frames[45].state.omega_body_radps;
  clean.frames = 160;
  FitOptions clean_options = testing::DefaultFitOptions(clean);
  clean_options.rotation = RotationChoice::kConstantSpin;
  const Simulation clean_sim = SimulateFlight(clean);
  const FitResult clean_fit = FitFrames(clean_sim, clean_options);
  const FlightSummary clean_summary = Summarise(clean_fit, s.body);
  for (int i = 0; i < 3; ++i) {
    ASSERT_EQ(summary.cm_body_m[i].has_value(), clean_summary.cm_body_m[i].has_value());
    if (!summary.cm_body_m[i]) continue;
    const double error = *summary.cm_body_m[i] - sim.mass.cm_body_m[i];
    std::printf("cm[%d]: error %+.4f mm (sigma %.4f); clean clip sigma %.4f mm\n", i, 1e3 * error,
                1e3 * *summary.cm_sigma_m[i], 1e3 * *clean_summary.cm_sigma_m[i]);
    EXPECT_LT(std::abs(error), 3 * *summary.cm_sigma_m[i]);
    EXPECT_LT(*summary.cm_sigma_m[i], 1.25 * *clean_summary.cm_sigma_m[i]);
  }
  EXPECT_LT(fit.rms_px, 1.2 * clean_fit.rms_px);
}

// A clip of free flight only: the window runs from the first frame to the last.
TEST(WindowTest, CleanClipKeepsEveryFrame) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 12);
  const Simulation sim = SimulateFlight(s);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  const FreeFlightWindow window =
      FindFreeFlightWindow(GroupByFrame(sim.tracks, s.capture_fps), s.body, {s.camera}, options);
  EXPECT_TRUE(window.start.clip_edge);
  EXPECT_TRUE(window.end.clip_edge);
  EXPECT_EQ(window.start.frame, 0);
  EXPECT_EQ(window.end.frame, s.frames - 1);
}

// One marker's centre biased by 1.5 px over 20 frames (partly hidden or shadowed there: a
// local error of that marker, not an event of the body) at the clip's start, in its middle
// and at its end: the clean flight keeps every frame. (With noise correlated from frame to
// frame, AR(1) rho 0.8, the window still cuts 12 frames at one end or 54 at the other:
// docs/method.md, open cases.)
TEST(WindowTest, OneMarkersLocalBiasIsNotTheBodyLeavingFreeFlight) {
  for (const int first_frame : {0, 115, 230}) {
    SCOPED_TRACE(::testing::Message() << "bias from frame " << first_frame);
    const Scenario s = testing::PlanarSpinScenario(0.05, 21);
    Simulation sim = SimulateFlight(s);
    for (TrackPoint& p : sim.tracks) {
      if (p.marker == 2 && p.frame >= first_frame && p.frame < first_frame + 20) {
        p.x_px += 1.2;
        p.y_px -= 0.9;
      }
    }
    FitOptions options = testing::DefaultFitOptions(s);
    const FreeFlightWindow window =
        FindFreeFlightWindow(GroupByFrame(sim.tracks, s.capture_fps), s.body, {s.camera}, options);
    EXPECT_EQ(window.start.frame, 0);
    EXPECT_EQ(window.end.frame, s.frames - 1);
  }
}

}  // namespace
}  // namespace tumbletrace
