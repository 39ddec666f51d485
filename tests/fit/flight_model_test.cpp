// The fit's closed-form flight model against the simulator's numerical integration of
// Euler's equations (an independent path to the same motion).
#include "tumbletrace/fit/flight_model.hpp"

#include <gtest/gtest.h>

#include <Eigen/Geometry>

#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/model/mass_properties.hpp"
#include "tumbletrace/sim/simulate.hpp"
#include "support/scenarios.hpp"

namespace tumbletrace {
namespace {

TEST(FlightModel, ConstantSpinAboutPrincipalAxisMatchesIntegratedEulerEquations) {
  const Scenario s = testing::PlanarSpinScenario(0.0);
  const Simulation sim = SimulateFlight(s);
  const RigidState& start = sim.frames.front().state;
  FlightParameters p;
  p.t0_s = 0.0;
  p.r0_world_m = start.cm_world_m;
  p.v0_world_mps = start.velocity_world_mps;
  p.g_world_mps2 = s.gravity_world_mps2;
  const Eigen::Quaterniond& q = start.world_from_body;
  p.q0_wxyz = {q.w(), q.x(), q.y(), q.z()};
  p.omega_world_radps = start.world_from_body * start.omega_body_radps;
  for (const FrameTruth& f : sim.frames) {
    EXPECT_LT((p.PositionAt(f.time_s) - f.state.cm_world_m).norm(), 1e-12);
    EXPECT_LT((p.VelocityAt(f.time_s) - f.state.velocity_world_mps).norm(), 1e-12);
    const Eigen::Matrix3d dr =
        p.WorldFromBodyAt(f.time_s).transpose() * f.state.world_from_body.toRotationMatrix();
    EXPECT_LT(Eigen::AngleAxisd(dr).angle(), 1e-10) << "frame " << f.frame;
  }
}

TEST(FlightModel, SpinOffPrincipalAxisIsNotConstantInTheWorld) {
  // The constant-spin model is exact only about a principal axis: a spin off the axes
  // wobbles, which the integrator must show (the check above is not vacuous).
  Scenario s = testing::PlanarSpinScenario(0.0);
  s.launch_omega_body_radps = Eigen::Vector3d(8.0, 3.0, 30.0);
  const Simulation sim = SimulateFlight(s);
  const RigidState& a = sim.frames.front().state;
  const RigidState& b = sim.frames.back().state;
  const Eigen::Vector3d wa = a.world_from_body * a.omega_body_radps;
  const Eigen::Vector3d wb = b.world_from_body * b.omega_body_radps;
  EXPECT_GT((wa - wb).norm(), 0.1);
}

TEST(FlightModel, ZeroSpinKeepsTheOrientation) {
  const double q0[4] = {std::cos(0.4), 0.0, std::sin(0.4), 0.0};
  const double w[3] = {0, 0, 0};
  double q[4];
  ConstantSpinRotation::Orientation(q0, w, 0.123, q);
  for (int i = 0; i < 4; ++i) EXPECT_DOUBLE_EQ(q[i], q0[i]);
}

}  // namespace
}  // namespace tumbletrace
