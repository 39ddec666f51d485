#include "tumbletrace/fit/initialise.hpp"

#include <gtest/gtest.h>

#include <Eigen/Geometry>

#include "support/fit_helpers.hpp"
#include "support/scenarios.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

TEST(Initialise, PerFramePosesFromExactTracksMatchTruth) {
  const Scenario s = testing::ObliqueSpinScenario(0.0);
  const Simulation sim = SimulateFlight(s);
  const auto frames = GroupByFrame(sim.tracks, s.capture_fps);
  const auto poses = EstimateFramePoses(frames, s.body, s.camera, 4);
  ASSERT_EQ(poses.size(), sim.frames.size());
  for (const BodyPose& pose : poses) {
    const RigidState& truth = sim.frames[pose.frame].state;
    const Eigen::Vector3d origin_truth =
        truth.cm_world_m - truth.world_from_body * sim.mass.cm_body_m;
    EXPECT_LT((pose.origin_world_m - origin_truth).norm(), 1e-6);
    EXPECT_LT(Eigen::AngleAxisd(pose.world_from_body.transpose() *
                                truth.world_from_body.toRotationMatrix()).angle(), 1e-7);
  }
}

TEST(Initialise, ClosedFormStartIsNearTheTruthWithNoise) {
  const Scenario s = testing::ObliqueSpinScenario(0.2, 3);
  const Simulation sim = SimulateFlight(s);
  const auto poses = EstimateFramePoses(GroupByFrame(sim.tracks, s.capture_fps), s.body, s.camera, 4);
  const double t0 = 0.125;
  const FlightParameters p = InitialiseFlight(poses, t0, testing::DefaultFitOptions(s));
  const RigidState truth = StateAt(sim, t0);
  // A start inside the fit's basin, not a measurement: a few per cent is enough.
  EXPECT_LT((p.v0_world_mps - truth.velocity_world_mps).norm(), 0.1);
  EXPECT_LT((p.omega_world_radps - truth.world_from_body * truth.omega_body_radps).norm(), 1.0);
  EXPECT_LT(std::abs(p.cm_body_m.x() - sim.mass.cm_body_m.x()), 0.01);
  EXPECT_LT(std::abs(p.cm_body_m.y() - sim.mass.cm_body_m.y()), 0.01);
}

TEST(Initialise, RefusesWithTooFewPosedFrames) {
  EXPECT_THROW(InitialiseFlight({BodyPose{}, BodyPose{}}, 0.0, FitOptions{}), DataError);
}

}  // namespace
}  // namespace tumbletrace
