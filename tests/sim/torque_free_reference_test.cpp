// The simulator's integration of Euler's equations against outside references:
//  - the asymmetric top's analytic solution in Jacobi elliptic functions (Landau &
//    Lifshitz, Mechanics, section 37 — from memory; confirmed here by the agreement itself,
//    to 1e-9), evaluated with Boost.Math's jacobi_cn/sn/dn, an independent implementation;
//  - the symmetric top's body-frame precession rate w3 (I3 - I1) / I1 (Landau & Lifshitz,
//    section 33 — from memory);
//  - the growth rate near the intermediate axis, W sqrt((I2 - I1)(I3 - I2) / (I1 I3))
//    (the standard linearisation of Euler's equations).
#include <gtest/gtest.h>

#include <boost/math/special_functions/jacobi_elliptic.hpp>
#include <cmath>

#include "tumbletrace/sim/motion.hpp"

namespace tumbletrace {
namespace {

RigidBodyIntegrator Free(const Eigen::Vector3d& moments, double step_s) {
  return RigidBodyIntegrator(
      moments.asDiagonal().toDenseMatrix(),
      [](const Eigen::Vector3d&, const Eigen::Vector3d&) { return Eigen::Vector3d::Zero(); },
      step_s);
}

TEST(TorqueFreeReference, AsymmetricTopFollowsJacobiEllipticFunctions) {
  const double i1 = 1e-3, i2 = 2e-3, i3 = 3e-3;
  const double w1_0 = 2.0, w3_0 = 8.0;  // w2 = 0 at t = 0: w1 and w3 at their largest
  const double two_e = i1 * w1_0 * w1_0 + i3 * w3_0 * w3_0;
  const double m2 = i1 * i1 * w1_0 * w1_0 + i3 * i3 * w3_0 * w3_0;
  ASSERT_GT(m2, two_e * i2);  // the case M^2 > 2 E I2 of the reference
  const double k = std::sqrt((i2 - i1) * (two_e * i3 - m2) / ((i3 - i2) * (m2 - two_e * i1)));
  const double rate = std::sqrt((i3 - i2) * (m2 - two_e * i1) / (i1 * i2 * i3));
  const double a1 = std::sqrt((two_e * i3 - m2) / (i1 * (i3 - i1)));
  const double a2 = std::sqrt((two_e * i3 - m2) / (i2 * (i3 - i2)));
  const double a3 = std::sqrt((m2 - two_e * i1) / (i3 * (i3 - i1)));
  ASSERT_NEAR(a1, w1_0, 1e-12);
  ASSERT_NEAR(a3, w3_0, 1e-12);

  const RigidBodyIntegrator integrator = Free({i1, i2, i3}, 1e-4);
  RigidState s;
  s.omega_body_radps = {w1_0, 0.0, w3_0};
  for (int step = 1; step <= 200; ++step) {
    s = integrator.Advance(s, 0.01);
    const double tau = rate * 0.01 * step;
    EXPECT_NEAR(s.omega_body_radps.x(), a1 * boost::math::jacobi_cn(k, tau), 1e-9);
    EXPECT_NEAR(s.omega_body_radps.y(), a2 * boost::math::jacobi_sn(k, tau), 1e-9);
    EXPECT_NEAR(s.omega_body_radps.z(), a3 * boost::math::jacobi_dn(k, tau), 1e-9);
  }
}

TEST(TorqueFreeReference, SymmetricTopPrecessesAtItsClosedFormRate) {
  const double i1 = 1e-3, i3 = 2.5e-3, w3 = 10.0;
  const double precession_radps = w3 * (i3 - i1) / i1;  // 15 rad/s
  const RigidBodyIntegrator integrator = Free({i1, i1, i3}, 1e-4);
  RigidState s;
  s.omega_body_radps = {1.0, 0.0, w3};
  for (int step = 1; step <= 100; ++step) {
    s = integrator.Advance(s, 0.01);
    const double t = 0.01 * step;
    EXPECT_NEAR(s.omega_body_radps.x(), std::cos(precession_radps * t), 1e-9);
    EXPECT_NEAR(s.omega_body_radps.y(), std::sin(precession_radps * t), 1e-9);
    EXPECT_NEAR(s.omega_body_radps.z(), w3, 1e-12);
  }
}

TEST(TorqueFreeReference, SpinNearTheIntermediateAxisGrowsAtTheLinearisedRate) {
  const double i1 = 1e-3, i2 = 2e-3, i3 = 3e-3, w = 20.0;
  const double lambda = w * std::sqrt((i2 - i1) * (i3 - i2) / (i1 * i3));  // 8.165 1/s
  const RigidBodyIntegrator integrator = Free({i1, i2, i3}, 1e-4);
  RigidState s;
  s.omega_body_radps = {1e-10, w, 1e-10};
  // Let the decaying mode die out, then measure the growth while still far from linear
  // saturation (amplitude below 1e-3 of the spin).
  s = integrator.Advance(s, 0.8);
  const double a = s.omega_body_radps.x();
  s = integrator.Advance(s, 0.5);
  const double b = s.omega_body_radps.x();
  ASSERT_LT(std::abs(b), 1e-3 * w);
  EXPECT_NEAR(std::log(b / a) / 0.5, lambda, 1e-3 * lambda);
}

}  // namespace
}  // namespace tumbletrace
