// The simulator's integrator: the invariants of torque-free motion (any mechanics text:
// energy E = w.Iw/2 and the world angular momentum L = R I w are conserved) and the
// ballistic path of the CM; and the phases of a throw (hand, free flight, bounce).
#include "tumbletrace/sim/motion.hpp"

#include <gtest/gtest.h>

#include "support/air_scenarios.hpp"
#include "tumbletrace/model/mass_properties.hpp"
#include "tumbletrace/sim/flight_phases.hpp"

namespace tumbletrace {
namespace {

RigidBodyIntegrator Tumbler(double step_s) {
  const Eigen::Vector3d g(0, 0, -9.80665);
  // Three distinct moments and off-diagonal products: a general body.
  Eigen::Matrix3d inertia;
  inertia << 2.0e-4, 1.0e-5, -2.0e-5, 1.0e-5, 3.1e-3, 4.0e-6, -2.0e-5, 4.0e-6, 3.3e-3;
  return RigidBodyIntegrator(
      inertia, [g](const Eigen::Vector3d&, const Eigen::Vector3d&, const Eigen::Vector3d&) { return g; }, step_s);
}

TEST(RigidBodyIntegrator, ConservesEnergyAndAngularMomentumWhileTumbling) {
  const RigidBodyIntegrator integrator = Tumbler(2e-5);
  RigidState s;
  s.omega_body_radps = Eigen::Vector3d(3.0, 25.0, 4.0);  // near the intermediate axis: flips
  s.world_from_body = Eigen::Quaterniond(Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 1, 0).normalized()));
  const double e0 = integrator.RotationalEnergy(s);
  const Eigen::Vector3d l0 = integrator.AngularMomentumWorld(s);
  for (int i = 0; i < 250; ++i) s = integrator.Advance(s, 1e-3);
  EXPECT_NEAR(integrator.RotationalEnergy(s) / e0, 1.0, 1e-10);
  EXPECT_LT((integrator.AngularMomentumWorld(s) - l0).norm() / l0.norm(), 1e-10);
}

TEST(RigidBodyIntegrator, CmFollowsTheParabola) {
  const RigidBodyIntegrator integrator = Tumbler(1e-4);
  RigidState s;
  s.cm_world_m = Eigen::Vector3d(0.1, -0.2, 1.0);
  s.velocity_world_mps = Eigen::Vector3d(3.0, 0.5, 4.0);
  const RigidState later = integrator.Advance(s, 0.3);
  const Eigen::Vector3d expected =
      s.cm_world_m + 0.3 * s.velocity_world_mps + 0.5 * 0.09 * Eigen::Vector3d(0, 0, -9.80665);
  EXPECT_LT((later.cm_world_m - expected).norm(), 1e-12);
}

TEST(RigidBodyIntegrator, BackwardThenForwardReturnsToTheStart) {
  const RigidBodyIntegrator integrator = Tumbler(1e-4);
  RigidState s;
  s.omega_body_radps = Eigen::Vector3d(10.0, -4.0, 30.0);
  const RigidState back = integrator.Advance(integrator.Advance(s, -0.01), 0.01);
  EXPECT_LT((back.omega_body_radps - s.omega_body_radps).norm(), 1e-10);
  EXPECT_LT(back.world_from_body.angularDistance(s.world_from_body), 1e-10);
}

// The phases of a throw: the state is continuous across the release (only the forces
// change there); at the impact the normal velocity reverses and shrinks by the
// restitution, the tangential velocity is kept and the spin is scaled; crossing the
// impact backwards undoes it.
TEST(FlightPhases, ReleaseIsContinuousAndTheBounceReversesTheNormalVelocity) {
  Scenario s = testing::HandAndNetScenario(0.0, 1);
  const MassProperties mass = CombineParts(s.body.parts);
  const FlightPhases phases(s, mass);
  RigidState launch;
  launch.cm_world_m = s.launch_cm_world_m;
  launch.velocity_world_mps = s.launch_velocity_world_mps;
  launch.world_from_body = s.launch_world_from_body;
  launch.omega_body_radps = s.launch_omega_body_radps;
  const double release = s.hand->release_time_s, impact = s.impact->time_s;
  const RigidState before = phases.Advance(launch, release, release - 1e-7);
  const RigidState after = phases.Advance(launch, release, release + 1e-7);
  EXPECT_LT((before.velocity_world_mps - after.velocity_world_mps).norm(), 1e-4);
  // Before release the hand's push: the velocity 10 ms earlier differs by (g + a) 10 ms.
  const RigidState held = phases.Advance(launch, release, release - 0.01);
  const Eigen::Vector3d expected =
      launch.velocity_world_mps - 0.01 * (s.gravity_world_mps2 + s.hand->acceleration_mps2);
  EXPECT_LT((held.velocity_world_mps - expected).norm(), 1e-9);
  const RigidState in = phases.Advance(launch, release, impact - 1e-9);
  const RigidState out = phases.Advance(launch, release, impact + 1e-9);
  const Eigen::Vector3d n = s.impact->normal_world;
  EXPECT_NEAR(out.velocity_world_mps.dot(n), -s.impact->restitution * in.velocity_world_mps.dot(n), 1e-6);
  EXPECT_NEAR(out.velocity_world_mps.y(), in.velocity_world_mps.y(), 1e-6);
  EXPECT_NEAR(out.omega_body_radps.norm(), s.impact->spin_kept * in.omega_body_radps.norm(), 1e-6);
  const RigidState back = phases.Advance(out, impact + 1e-9, release);
  EXPECT_LT((back.velocity_world_mps - launch.velocity_world_mps).norm(), 1e-9);
  EXPECT_LT((back.cm_world_m - launch.cm_world_m).norm(), 1e-9);
}

}  // namespace
}  // namespace tumbletrace
