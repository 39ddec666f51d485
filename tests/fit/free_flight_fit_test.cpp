// End-to-end recovery on simulated tracks: a 300 mm tool, 1000 frames/s, 0.25 s of flight,
// 6 markers, Gaussian pixel noise of 0.2 px. The truth comes from the simulator, which
// integrates Euler's equations numerically (independently of the fit's closed forms).
#include "tumbletrace/fit/free_flight_fit.hpp"

#include <gtest/gtest.h>

#include "support/fit_helpers.hpp"
#include "support/scenarios.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

// Asserts the bounds: the observable CM components within 3 reported sigma and
// 1 mm of truth, the component along the fixed spin axis (body z) unobservable, launch
// velocity within 0.3 %, spin rate within 0.1 %.
void ExpectRecovered(const testing::Recovery& r) {
  const FlightSummary& s = r.summary;
  const Eigen::Vector3d& cm_true = r.sim.mass.cm_body_m;
  EXPECT_TRUE(r.fit.converged);
  for (int i = 0; i < 2; ++i) {
    ASSERT_TRUE(s.cm_body_m[i].has_value()) << "axis " << i;
    ASSERT_TRUE(s.cm_sigma_m[i].has_value());
    const double error = *s.cm_body_m[i] - cm_true[i];
    EXPECT_LT(std::abs(error), 3.0 * *s.cm_sigma_m[i]) << "axis " << i;
    EXPECT_LT(std::abs(error), 1e-3) << "axis " << i;
    EXPECT_GT(*s.cm_sigma_m[i], 0.0);
  }
  EXPECT_FALSE(s.cm_body_m[2].has_value());
  EXPECT_FALSE(s.cm_sigma_m[2].has_value());
  ASSERT_EQ(s.cm_unobservable_body.size(), 1u);
  EXPECT_GT(std::abs(s.cm_unobservable_body[0].z()), 0.999);  // within 2.5 deg
  EXPECT_FALSE(r.fit.warnings.empty());

  // Launch velocity within 0.3 % of the speed (every component, the one along the line
  // of sight too), and within 3 reported sigma.
  const RigidState& launch = r.sim.frames.front().state;
  const double speed = launch.velocity_world_mps.norm();
  EXPECT_LT((s.launch_velocity_mps - launch.velocity_world_mps).norm(), 3e-3 * speed);
  for (int i = 0; i < 3; ++i) {
    EXPECT_LT(std::abs(s.launch_velocity_mps[i] - launch.velocity_world_mps[i]),
              3.0 * s.launch_sigma_velocity_mps[i]) << "v " << i;
  }
  const double rate_true = launch.omega_body_radps.norm() / (2 * M_PI);
  EXPECT_LT(std::abs(s.rate_rev_per_s - rate_true), 1e-3 * rate_true);
  EXPECT_NEAR(r.fit.sigma_px, 0.2, 0.02);
}

TEST(FreeFlightFit, PlanarSpinFacingCamera) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 11);
  const auto r = testing::SimulateAndFit(s, testing::DefaultFitOptions(s));
  ExpectRecovered(r);
  EXPECT_EQ(r.fit.outliers, 0);
  EXPECT_EQ(r.fit.observations, 250 * 6);
}

TEST(FreeFlightFit, ObliqueCameraWithDistortion) {
  const Scenario s = testing::ObliqueSpinScenario(0.2, 12);
  ExpectRecovered(testing::SimulateAndFit(s, testing::DefaultFitOptions(s)));
}

TEST(FreeFlightFit, FivePercentGrossOutliersAreCountedAndDoNotBias) {
  for (const Scenario& s : {testing::PlanarSpinScenario(0.2, 13), testing::ObliqueSpinScenario(0.2, 14)}) {
    testing::Recovery r = testing::SimulateAndFit(s, testing::DefaultFitOptions(s), 0.05);
    ExpectRecovered(r);
    // About 5 % of 1500 sightings; every corrupted one (>= 15 px off) must be caught.
    EXPECT_GE(r.fit.outliers, 50);
    EXPECT_LE(r.fit.outliers, 110);
  }
}

TEST(FreeFlightFit, ExactTracksGiveTheTruthToNumericalPrecision) {
  const Scenario s = testing::ObliqueSpinScenario(0.0);
  const auto r = testing::SimulateAndFit(s, testing::DefaultFitOptions(s));
  EXPECT_LT(r.fit.rms_px, 1e-6);
  EXPECT_NEAR(*r.summary.cm_body_m[0], r.sim.mass.cm_body_m.x(), 1e-8);
  EXPECT_NEAR(*r.summary.cm_body_m[1], r.sim.mass.cm_body_m.y(), 1e-8);
}

TEST(FreeFlightFit, EstimatedGravityMatchesTheSessionValue) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 15);
  FitOptions o = testing::DefaultFitOptions(s);
  o.gravity_mode = GravityMode::kEstimate;
  o.gravity_world_mps2 = Eigen::Vector3d(0, 0, -9.0);  // only the start
  const auto r = testing::SimulateAndFit(s, o);
  ASSERT_TRUE(r.summary.sigma_gravity_mps2.has_value());
  for (int i = 0; i < 3; ++i) {
    EXPECT_LT(std::abs(r.summary.gravity_world_mps2[i] - s.gravity_world_mps2[i]),
              4.0 * (*r.summary.sigma_gravity_mps2)[i]);
  }
  EXPECT_LT((*r.summary.sigma_gravity_mps2).z(), 0.05);
}

TEST(FreeFlightFit, WindowLimitsTheFrames) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 16);
  FitOptions o = testing::DefaultFitOptions(s);
  o.first_frame = 50;
  o.last_frame = 149;
  const auto r = testing::SimulateAndFit(s, o);
  EXPECT_EQ(r.fit.first_frame, 50);
  EXPECT_EQ(r.fit.last_frame, 149);
  EXPECT_EQ(r.fit.frames_used, 100);
  EXPECT_EQ(r.summary.launch_frame, 50);
  EXPECT_NEAR(r.summary.launch_time_s, 0.050, 1e-12);
  const RigidState truth = r.sim.frames[50].state;
  for (int i = 0; i < 3; ++i) {
    EXPECT_LT(std::abs(r.summary.launch_velocity_mps[i] - truth.velocity_world_mps[i]),
              3.0 * r.summary.launch_sigma_velocity_mps[i]);
  }
}

TEST(FreeFlightFit, RefusesTooFewFrames) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 17);
  FitOptions o = testing::DefaultFitOptions(s);
  o.first_frame = 10;
  o.last_frame = 11;
  EXPECT_THROW(testing::SimulateAndFit(s, o), DataError);
}

TEST(FreeFlightFit, RefusesAMarkerTheBodyDoesNotHave) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 18);
  Simulation sim = SimulateFlight(s);
  sim.tracks[5].marker = 42;
  EXPECT_THROW(FitFreeFlight(GroupByFrame(sim.tracks, s.capture_fps), s.body, s.camera,
                             testing::DefaultFitOptions(s)),
               InputError);
}

TEST(FreeFlightFit, RefusesInvalidOptions) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 19);
  FitOptions o = testing::DefaultFitOptions(s);
  o.robust_loss_scale_px = -1;
  EXPECT_THROW(testing::SimulateAndFit(s, o), InputError);
}

}  // namespace
}  // namespace tumbletrace
