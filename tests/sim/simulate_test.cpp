#include "tumbletrace/sim/simulate.hpp"

#include <gtest/gtest.h>

#include "support/scenarios.hpp"

namespace tumbletrace {
namespace {

TEST(Simulate, TracksAreTheTruthPlusTheStatedNoise) {
  const Scenario s = testing::PlanarSpinScenario(0.5, 5);
  const Simulation sim = SimulateFlight(s);
  ASSERT_EQ(sim.frames.size(), 250u);
  ASSERT_EQ(sim.tracks.size(), 250u * 6u);  // every dot faces the camera throughout
  double sum_sq = 0;
  for (const TrackPoint& p : sim.tracks) {
    const MarkerTruth& t = sim.frames[p.frame].markers[*p.marker - 1];
    sum_sq += (Eigen::Vector2d(p.x_px, p.y_px) - t.pixel).squaredNorm();
  }
  EXPECT_NEAR(std::sqrt(sum_sq / (2.0 * sim.tracks.size())), 0.5, 0.03);
}

TEST(Simulate, DotsTurnedAwayFromTheCameraAreNotTracked) {
  Scenario s = testing::PlanarSpinScenario(0.0);
  // Spin about the handle: the marked face turns away half of the time.
  s.launch_omega_body_radps = Eigen::Vector3d(2 * M_PI * 4.0, 0, 0);
  const Simulation sim = SimulateFlight(s);
  EXPECT_LT(sim.tracks.size(), 250u * 6u * 3 / 4);
  EXPECT_GT(sim.tracks.size(), 250u * 6u / 4);
}

TEST(Simulate, StateAtMatchesTheFrames) {
  const Scenario s = testing::PlanarSpinScenario(0.0);
  const Simulation sim = SimulateFlight(s);
  const RigidState mid = StateAt(sim, sim.frames[100].time_s);
  EXPECT_LT((mid.cm_world_m - sim.frames[100].state.cm_world_m).norm(), 1e-12);
  const RigidState between = StateAt(sim, 0.1005);
  EXPECT_GT((between.cm_world_m - sim.frames[100].state.cm_world_m).norm(), 1e-4);
}

}  // namespace
}  // namespace tumbletrace
