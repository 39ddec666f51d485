// The simulator's integration of Euler's equations against outside references
// (tests/support/torque_free_references.hpp names them).
#include <gtest/gtest.h>

#include "support/torque_free_references.hpp"
#include "tumbletrace/sim/motion.hpp"

namespace tumbletrace {
namespace {

std::vector<Eigen::Vector3d> Simulate(const Eigen::Vector3d& moments, const Eigen::Vector3d& w0,
                                      const std::vector<double>& times_s) {
  const RigidBodyIntegrator integrator(
      moments.asDiagonal().toDenseMatrix(),
      [](const Eigen::Vector3d&, const Eigen::Vector3d&, const Eigen::Vector3d&) { return Eigen::Vector3d::Zero(); }, 1e-4);
  RigidState s;
  s.omega_body_radps = w0;
  double t = 0.0;
  std::vector<Eigen::Vector3d> out;
  for (double next : times_s) {
    s = integrator.Advance(s, next - t);
    t = next;
    out.push_back(s.omega_body_radps);
  }
  return out;
}

TEST(TorqueFreeReference, AsymmetricTopFollowsJacobiEllipticFunctions) {
  testing::ExpectAsymmetricTopFollowsJacobiEllipticFunctions(Simulate, 1e-9);
}

TEST(TorqueFreeReference, SymmetricTopPrecessesAtItsClosedFormRate) {
  testing::ExpectSymmetricTopPrecessesAtItsClosedFormRate(Simulate, 1e-9);
}

TEST(TorqueFreeReference, SpinNearTheIntermediateAxisGrowsAtTheLinearisedRate) {
  testing::ExpectIntermediateAxisGrowthRate(Simulate);
}

}  // namespace
}  // namespace tumbletrace
