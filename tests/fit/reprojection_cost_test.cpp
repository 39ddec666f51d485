// Every Jacobian of the reprojection residual against central differences, through the
// quaternion manifold, on ordinary and awkward states (Ceres' GradientChecker).
#include "tumbletrace/fit/reprojection_cost.hpp"

#include <ceres/gradient_checker.h>
#include <ceres/manifold.h>
#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <memory>

#include "support/scenarios.hpp"
#include "tumbletrace/fit/symmetric_axes_manifold.hpp"

namespace tumbletrace {
namespace {

struct State {
  double r0[3], v0[3], g[3], q0[4], w[3], c[3], offset[1], principal[4], sd[2];
};

State Ordinary() {
  return {{0.1, 0.05, -0.2}, {3.0, 0.1, 2.5}, {0, 0, -9.81}, {0.8, 0.2, -0.5, 0.26},
          {0.4, -1.0, 31.0}, {0.25, 0.002, -0.001}, {0.0003},
          {0.9, -0.1, 0.3, 0.2}, {0.75, 0.2}};
}

SightingGeometry Geometry(double dt_s, const Camera& camera) {
  return {Eigen::Vector2d(500.2, 300.7), Eigen::Vector3d(0.18, 0.0, 0.014), dt_s,
          camera.intrinsics, *camera.camera_from_world};
}

// Ceres' GradientChecker (2.1) reports numeric derivatives for some plain blocks that
// disagree with plain central differences of Evaluate (the clock offset's, the moments'),
// while its other blocks agree to 1e-9; those blocks are checked here by central
// differences of Evaluate directly, and the checker's verdict is taken over the others.
void ExpectCheckerAgreesExcept(const ceres::GradientChecker::ProbeResults& results,
                               const std::vector<int>& skipped, double tolerance) {
  for (size_t b = 0; b < results.jacobians.size(); ++b) {
    if (std::count(skipped.begin(), skipped.end(), static_cast<int>(b))) continue;
    const Eigen::MatrixXd& user = results.local_jacobians[b];
    const Eigen::MatrixXd& numeric = results.local_numeric_jacobians[b];
    const double scale = std::max(1.0, numeric.cwiseAbs().maxCoeff());
    EXPECT_LE((user - numeric).cwiseAbs().maxCoeff() / scale, tolerance) << "block " << b;
  }
}

void ExpectBlockCorrect(const ceres::CostFunction& cost, std::vector<double*> params, int block,
                        double tolerance) {
  std::vector<std::vector<double>> jacobian_storage;
  std::vector<double*> jacobians;
  for (int size : cost.parameter_block_sizes()) {
    jacobian_storage.emplace_back(2 * size);
    jacobians.push_back(jacobian_storage.back().data());
  }
  double residual[2];
  ASSERT_TRUE(cost.Evaluate(params.data(), residual, jacobians.data()));
  const int size = cost.parameter_block_sizes()[block];
  for (int c = 0; c < size; ++c) {
    double& x = params[block][c];
    const double h = 1e-7 * std::max(1.0, std::abs(x)), at = x;
    double plus[2], minus[2];
    x = at + h;
    cost.Evaluate(params.data(), plus, nullptr);
    x = at - h;
    cost.Evaluate(params.data(), minus, nullptr);
    x = at;
    for (int r = 0; r < 2; ++r) {
      const double numeric = (plus[r] - minus[r]) / (2 * h);
      EXPECT_NEAR(jacobians[block][r * size + c], numeric,
                  tolerance * std::max(1.0, std::abs(numeric)))
          << "block " << block << " row " << r << " column " << c;
    }
  }
}

void ExpectJacobiansCorrect(State s, double dt_s, const Camera& camera) {
  Eigen::Map<Eigen::Vector4d>(s.q0).normalize();
  std::unique_ptr<ceres::CostFunction> cost(MarkerReprojectionCost<>::Create(Geometry(dt_s, camera)));
  ceres::QuaternionManifold quaternion;
  std::vector<const ceres::Manifold*> manifolds = {nullptr, nullptr, nullptr, &quaternion,
                                                    nullptr, nullptr, nullptr};
  ceres::NumericDiffOptions numeric;  // central differences by default
  ceres::GradientChecker checker(cost.get(), &manifolds, numeric);
  ceres::GradientChecker::ProbeResults results;
  const double* params[] = {s.r0, s.v0, s.g, s.q0, s.w, s.c, s.offset};
  checker.Probe(params, 1e-7, &results);
  ExpectCheckerAgreesExcept(results, {6}, 1e-7);
  ExpectBlockCorrect(*cost, {s.r0, s.v0, s.g, s.q0, s.w, s.c, s.offset}, 6, 1e-6);
}

// The torque-free residual: its Jacobian chains the integrator's own derivatives (Jets
// through every Runge-Kutta step) into the residual's; central differences re-integrate.
void ExpectTorqueFreeJacobiansCorrect(State s, double dt_s, const Camera& camera,
                                      const ceres::Manifold* principal_manifold) {
  Eigen::Map<Eigen::Vector4d>(s.q0).normalize();
  Eigen::Map<Eigen::Vector4d>(s.principal).normalize();
  auto trajectory = std::make_shared<TorqueFreeTrajectory>(std::vector<double>{dt_s}, 0.004);
  std::unique_ptr<ceres::CostFunction> cost(
      TorqueFreeReprojectionCost<>::Create(Geometry(dt_s, camera), trajectory, 0));
  ceres::QuaternionManifold quaternion;
  std::vector<const ceres::Manifold*> manifolds = {nullptr, nullptr, nullptr, &quaternion, nullptr,
                                                    nullptr, nullptr, principal_manifold, nullptr};
  ceres::NumericDiffOptions numeric;
  ceres::GradientChecker checker(cost.get(), &manifolds, numeric);
  ceres::GradientChecker::ProbeResults results;
  const double* params[] = {s.r0, s.v0, s.g, s.q0, s.w, s.c, s.offset, s.principal, s.sd};
  checker.Probe(params, 1e-6, &results);
  ExpectCheckerAgreesExcept(results, {6, 8}, 1e-6);
  for (int block : {6, 8}) {
    ExpectBlockCorrect(*cost, {s.r0, s.v0, s.g, s.q0, s.w, s.c, s.offset, s.principal, s.sd},
                       block, 1e-5);
  }
}

TEST(ReprojectionCost, TorqueFreeJacobiansMatchCentralDifferences) {
  ceres::QuaternionManifold quaternion;
  SymmetricAxesManifold symmetric;
  ExpectTorqueFreeJacobiansCorrect(Ordinary(), 0.07, testing::ObliqueCamera(), &quaternion);
  ExpectTorqueFreeJacobiansCorrect(Ordinary(), -0.11, testing::ObliqueCamera(), &quaternion);
  ExpectTorqueFreeJacobiansCorrect(Ordinary(), 0.05, testing::ObliqueCamera(), &symmetric);
  State tumbling = Ordinary();  // a fast tumble: w across the principal axes
  tumbling.w[0] = 20.0;
  tumbling.w[1] = -15.0;
  tumbling.w[2] = 10.0;
  ExpectTorqueFreeJacobiansCorrect(tumbling, 0.2, testing::FacingCamera(), &quaternion);
}

TEST(ReprojectionCost, SymmetricAxesManifoldIsConsistent) {
  // Ceres' own check of Plus, Minus and their Jacobians.
  SymmetricAxesManifold manifold;
  Eigen::Vector4d x(0.9, -0.1, 0.3, 0.2);
  x.normalize();
  const double delta[2] = {0.03, -0.02};
  double y[4];
  manifold.Plus(x.data(), delta, y);
  double back[2];
  manifold.Minus(y, x.data(), back);
  EXPECT_NEAR(back[0], delta[0], 1e-12);
  EXPECT_NEAR(back[1], delta[1], 1e-12);
  // Rotations about principal axis 3 are not in the tangent: the symmetry axis p e3 moves
  // by exactly |delta| (radians) under Plus.
  const Eigen::Quaterniond qx(x[0], x[1], x[2], x[3]), qy(y[0], y[1], y[2], y[3]);
  const double moved = std::acos(std::clamp((qx * Eigen::Vector3d::UnitZ()).dot(qy * Eigen::Vector3d::UnitZ()), -1.0, 1.0));
  EXPECT_NEAR(moved, std::hypot(delta[0], delta[1]), 1e-9);
  double plus_jacobian[8], minus_jacobian[8];
  manifold.PlusJacobian(x.data(), plus_jacobian);
  manifold.MinusJacobian(x.data(), minus_jacobian);
  const Eigen::Map<Eigen::Matrix<double, 4, 2, Eigen::RowMajor>> jp(plus_jacobian);
  const Eigen::Map<Eigen::Matrix<double, 2, 4, Eigen::RowMajor>> jm(minus_jacobian);
  EXPECT_TRUE((jm * jp).isApprox(Eigen::Matrix2d::Identity(), 1e-12));
  // Plus Jacobian against central differences.
  for (int c = 0; c < 2; ++c) {
    double dp[2] = {0, 0}, dm[2] = {0, 0}, yp[4], ym[4];
    dp[c] = 1e-7;
    dm[c] = -1e-7;
    manifold.Plus(x.data(), dp, yp);
    manifold.Plus(x.data(), dm, ym);
    for (int r = 0; r < 4; ++r) EXPECT_NEAR((yp[r] - ym[r]) / 2e-7, jp(r, c), 1e-7);
  }
}

TEST(ReprojectionCost, JacobiansMatchCentralDifferences) {
  ExpectJacobiansCorrect(Ordinary(), 0.07, testing::ObliqueCamera());
  ExpectJacobiansCorrect(Ordinary(), -0.11, testing::ObliqueCamera());
}

TEST(ReprojectionCost, JacobiansAtZeroTimeAndZeroSpin) {
  State s = Ordinary();
  s.w[0] = s.w[1] = s.w[2] = 0.0;
  ExpectJacobiansCorrect(s, 0.0, testing::FacingCamera());
  ExpectJacobiansCorrect(s, 0.05, testing::FacingCamera());
}

TEST(ReprojectionCost, JacobiansAtIdentityTinyAndNearPiRotations) {
  State s = Ordinary();
  const double identity[4] = {1, 0, 0, 0};
  std::copy_n(identity, 4, s.q0);
  ExpectJacobiansCorrect(s, 0.02, testing::FacingCamera());
  // A spin increment of 1e-8 rad over the step.
  s.w[0] = 1e-6;
  s.w[1] = 0.0;
  s.w[2] = 0.0;
  ExpectJacobiansCorrect(s, 0.01, testing::FacingCamera());
  // Near a half turn: q0 at pi - 1e-6 about a skew axis.
  const Eigen::Quaterniond near_pi(Eigen::AngleAxisd(M_PI - 1e-6, Eigen::Vector3d(1, 2, 3).normalized()));
  s = Ordinary();
  s.q0[0] = near_pi.w();
  s.q0[1] = near_pi.x();
  s.q0[2] = near_pi.y();
  s.q0[3] = near_pi.z();
  ExpectJacobiansCorrect(s, 0.03, testing::ObliqueCamera());
}

TEST(ReprojectionCost, PointBehindTheCameraFailsTheEvaluation) {
  State s = Ordinary();
  s.r0[1] = -10.0;  // 7 m behind the facing camera
  std::unique_ptr<ceres::CostFunction> cost(MarkerReprojectionCost<>::Create(
      {Eigen::Vector2d(0, 0), Eigen::Vector3d::Zero(), 0.0, testing::FacingCamera().intrinsics,
       *testing::FacingCamera().camera_from_world}));
  const double* params[] = {s.r0, s.v0, s.g, s.q0, s.w, s.c, s.offset};
  double residual[2];
  EXPECT_FALSE(cost->Evaluate(params, residual, nullptr));
}

}  // namespace
}  // namespace tumbletrace
