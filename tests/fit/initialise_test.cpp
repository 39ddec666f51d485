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

namespace tumbletrace {
namespace {

// The steady-spin start of a torque-free model predicts the constant spin's orientations
// (a spin about a principal axis is an equilibrium of Euler's equations), for an axis
// oblique to the body's axes, so that a free top fitted from it ends no worse.
TEST(SteadySpinStart, ReproducesTheConstantSpin) {
  FlightParameters spin;
  spin.rotation_model = RotationModel::kConstantSpin;
  spin.q0_wxyz = Eigen::Vector4d(0.9, 0.1, -0.3, 0.2).normalized();
  spin.omega_world_radps = Eigen::Vector3d(3.0, -30.0, 5.0);
  for (const RotationModel model : {RotationModel::kFreeTop, RotationModel::kSymmetricTop}) {
    const FlightParameters steady = SteadySpinStart(spin, model, FitOptions{});
    EXPECT_EQ(steady.rotation_model, model);
    for (const double t : {-0.12, -0.05, 0.0, 0.03, 0.125}) {
      const Eigen::Matrix3d difference =
          spin.WorldFromBodyAt(t).transpose() * steady.WorldFromBodyAt(t) - Eigen::Matrix3d::Identity();
      EXPECT_LT(difference.cwiseAbs().maxCoeff(), 1e-6) << RotationModelName(model) << " t " << t;
      EXPECT_LT((spin.OmegaWorldAt(t) - steady.OmegaWorldAt(t)).norm(), 1e-6);
    }
  }
}

}  // namespace
}  // namespace tumbletrace
