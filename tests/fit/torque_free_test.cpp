// The fit's own integrator of torque-free rotation (fit/torque_free.hpp): against the
// outside references shared with the simulator's integrator, and its conservation of the
// energy and of the world angular momentum at the fit's default step bound.
#include "tumbletrace/fit/torque_free.hpp"

#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <cstdio>

#include "support/torque_free_references.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"

namespace tumbletrace {
namespace {

std::vector<TorqueFreeState<double>> Propagate(const Eigen::Vector3d& moments,
                                               const Eigen::Vector3d& w0,
                                               const std::vector<double>& times_s,
                                               double max_step_angle_rad) {
  TorqueFreeState<double> x0;
  x0.u[0] = 1.0;
  x0.u[1] = x0.u[2] = x0.u[3] = 0.0;
  for (int i = 0; i < 3; ++i) x0.w[i] = w0[i];
  return PropagateTorqueFree(moments.data(), x0, times_s,
                             TorqueFreeMaxRate(w0.data(), moments.data()), max_step_angle_rad);
}

std::vector<Eigen::Vector3d> FitIntegrator(const Eigen::Vector3d& moments, const Eigen::Vector3d& w0,
                                           const std::vector<double>& times_s) {
  std::vector<Eigen::Vector3d> out;
  for (const auto& x : Propagate(moments, w0, times_s, FitOptions{}.max_step_angle_rad)) {
    out.emplace_back(x.w[0], x.w[1], x.w[2]);
  }
  return out;
}

TEST(TorqueFree, AsymmetricTopFollowsJacobiEllipticFunctions) {
  testing::ExpectAsymmetricTopFollowsJacobiEllipticFunctions(FitIntegrator, 1e-9);
}

TEST(TorqueFree, SymmetricTopPrecessesAtItsClosedFormRate) {
  testing::ExpectSymmetricTopPrecessesAtItsClosedFormRate(FitIntegrator, 1e-9);
}

TEST(TorqueFree, SpinNearTheIntermediateAxisGrowsAtTheLinearisedRate) {
  testing::ExpectIntermediateAxisGrowthRate(FitIntegrator);
}

// Relative drift of the energy and of the world angular momentum after `duration_s`.
std::pair<double, double> Drift(const Eigen::Vector3d& moments, const Eigen::Vector3d& w0,
                                double duration_s, double max_step_angle_rad) {
  const auto end = Propagate(moments, w0, {duration_s, -duration_s}, max_step_angle_rad);
  const double e0 = w0.dot(moments.cwiseProduct(w0));
  const Eigen::Vector3d l0 = moments.cwiseProduct(w0);
  double energy = 0.0, momentum = 0.0;
  for (const auto& x : end) {
    const Eigen::Vector3d w(x.w[0], x.w[1], x.w[2]);
    const Eigen::Quaterniond u(x.u[0], x.u[1], x.u[2], x.u[3]);
    energy = std::max(energy, std::abs(w.dot(moments.cwiseProduct(w)) - e0) / e0);
    momentum = std::max(momentum, (u * moments.cwiseProduct(w) - l0).norm() / l0.norm());
  }
  return {energy, momentum};
}

TEST(TorqueFree, ConservesEnergyAndWorldAngularMomentumOverTheWindow) {
  // A paddle-like body (moments 0.104 : 0.904 : 1) tumbling about its intermediate axis at
  // 5 rev/s with a 10 % perturbation (it flips about every 0.1 s), and a fast wobble about
  // the largest axis at 20 rev/s: 0.5 s either side of t0 (a 1 s window).
  const Eigen::Vector3d moments(0.104, 0.904, 1.0);
  for (const Eigen::Vector3d& w0 : {Eigen::Vector3d(3.0, 31.4, 3.0), Eigen::Vector3d(8.0, 10.0, 125.0)}) {
    const auto [energy, momentum] = Drift(moments, w0, 0.5, FitOptions{}.max_step_angle_rad);
    EXPECT_LT(energy, 1e-10);
    EXPECT_LT(momentum, 1e-10);
    for (double step : {0.002, 0.004, 0.008, 0.016, 0.032}) {
      const auto [e, l] = Drift(moments, w0, 0.5, step);
      std::printf("step %.3f rad: energy %.2e, momentum %.2e\n", step, e, l);
    }
  }
}

}  // namespace
}  // namespace tumbletrace

namespace tumbletrace {
namespace {

TEST(TorqueFree, MaxRateIsTheLargestSpeedOfTheMotion) {
  // The bound equals the largest |w| met along a long integration (both directions of
  // the polhode), for a wobble, a flip and a symmetric top, to the sampling's resolution.
  const Eigen::Vector3d cases[][2] = {{{0.104, 0.904, 1.0}, {3.0, 31.4, 3.0}},
                                      {{0.104, 0.904, 1.0}, {8.0, 10.0, 125.0}},
                                      {{7.8, 8.3, 1.0}, {2.0, 3.0, 30.0}},
                                      {{1.0, 1.0, 2.5}, {1.0, 0.0, 10.0}}};
  for (const auto& c : cases) {
    const Eigen::Vector3d& moments = c[0];
    const Eigen::Vector3d& w0 = c[1];
    const double bound = TorqueFreeMaxRate(w0.data(), moments.data());
    std::vector<double> times;
    for (int k = 1; k <= 4000; ++k) times.push_back(k * 5e-4);
    double largest = w0.norm();
    for (const auto& x : Propagate(moments, w0, times, 0.005)) {
      largest = std::max(largest, std::sqrt(x.w[0] * x.w[0] + x.w[1] * x.w[1] + x.w[2] * x.w[2]));
    }
    EXPECT_GE(bound, largest * (1 - 1e-9));
    EXPECT_LT(bound, largest * 1.001) << moments.transpose() << " / " << w0.transpose();
  }
}

}  // namespace
}  // namespace tumbletrace
