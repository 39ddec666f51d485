// Outside references for an integrator of torque-free rotation, shared by the simulator's
// integrator (tests/sim) and the fit's (tests/fit):
//  - the asymmetric top's analytic solution in Jacobi elliptic functions (Landau &
//    Lifshitz, Mechanics, section 37 — from memory; confirmed here by the agreement itself,
//    to 1e-9), evaluated with Boost.Math's jacobi_cn/sn/dn, an independent implementation;
//  - the symmetric top's body-frame precession rate w3 (I3 - I1) / I1 (Landau & Lifshitz,
//    section 33 — from memory);
//  - the growth rate near the intermediate axis, W sqrt((I2 - I1)(I3 - I2) / (I1 I3))
//    (the standard linearisation of Euler's equations).
#pragma once

#include <gtest/gtest.h>

#include <Eigen/Core>
#include <boost/math/special_functions/jacobi_elliptic.hpp>
#include <cmath>
#include <functional>
#include <vector>

namespace tumbletrace::testing {

// The body angular velocity at each of `times_s` (ascending, > 0) from w0 at t = 0, for
// principal moments `moments` (body axes = principal axes).
using TorqueFreePropagator = std::function<std::vector<Eigen::Vector3d>(
    const Eigen::Vector3d& moments, const Eigen::Vector3d& w0, const std::vector<double>& times_s)>;

inline void ExpectAsymmetricTopFollowsJacobiEllipticFunctions(const TorqueFreePropagator& propagate,
                                                              double tolerance) {
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
  std::vector<double> times;
  for (int step = 1; step <= 200; ++step) times.push_back(0.01 * step);
  const std::vector<Eigen::Vector3d> w = propagate({i1, i2, i3}, {w1_0, 0.0, w3_0}, times);
  for (size_t i = 0; i < times.size(); ++i) {
    const double tau = rate * times[i];
    EXPECT_NEAR(w[i].x(), a1 * boost::math::jacobi_cn(k, tau), tolerance);
    EXPECT_NEAR(w[i].y(), a2 * boost::math::jacobi_sn(k, tau), tolerance);
    EXPECT_NEAR(w[i].z(), a3 * boost::math::jacobi_dn(k, tau), tolerance);
  }
}

inline void ExpectSymmetricTopPrecessesAtItsClosedFormRate(const TorqueFreePropagator& propagate,
                                                           double tolerance) {
  const double i1 = 1e-3, i3 = 2.5e-3, w3 = 10.0;
  const double precession_radps = w3 * (i3 - i1) / i1;  // 15 rad/s
  std::vector<double> times;
  for (int step = 1; step <= 100; ++step) times.push_back(0.01 * step);
  const std::vector<Eigen::Vector3d> w = propagate({i1, i1, i3}, {1.0, 0.0, w3}, times);
  for (size_t i = 0; i < times.size(); ++i) {
    EXPECT_NEAR(w[i].x(), std::cos(precession_radps * times[i]), tolerance);
    EXPECT_NEAR(w[i].y(), std::sin(precession_radps * times[i]), tolerance);
    EXPECT_NEAR(w[i].z(), w3, tolerance);
  }
}

inline void ExpectIntermediateAxisGrowthRate(const TorqueFreePropagator& propagate) {
  const double i1 = 1e-3, i2 = 2e-3, i3 = 3e-3, w = 20.0;
  const double lambda = w * std::sqrt((i2 - i1) * (i3 - i2) / (i1 * i3));  // 8.165 1/s
  // Let the decaying mode die out, then measure the growth while still far from linear
  // saturation (amplitude below 1e-3 of the spin).
  const std::vector<Eigen::Vector3d> s = propagate({i1, i2, i3}, {1e-10, w, 1e-10}, {0.8, 1.3});
  const double a = s[0].x(), b = s[1].x();
  ASSERT_LT(std::abs(b), 1e-3 * w);
  EXPECT_NEAR(std::log(b / a) / 0.5, lambda, 1e-3 * lambda);
}

}  // namespace tumbletrace::testing
