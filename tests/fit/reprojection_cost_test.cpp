// Every Jacobian of the reprojection residual against central differences, through the
// quaternion manifold, on ordinary and awkward states (Ceres' GradientChecker).
#include "tumbletrace/fit/reprojection_cost.hpp"

#include <ceres/gradient_checker.h>
#include <ceres/manifold.h>
#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <memory>

#include "support/scenarios.hpp"

namespace tumbletrace {
namespace {

struct State {
  double r0[3], v0[3], g[3], q0[4], w[3], c[3];
};

State Ordinary() {
  return {{0.1, 0.05, -0.2}, {3.0, 0.1, 2.5}, {0, 0, -9.81}, {0.8, 0.2, -0.5, 0.26},
          {0.4, -1.0, 31.0}, {0.25, 0.002, -0.001}};
}

void ExpectJacobiansCorrect(State s, double dt_s, const Camera& camera) {
  Eigen::Map<Eigen::Vector4d>(s.q0).normalize();
  std::unique_ptr<ceres::CostFunction> cost(MarkerReprojectionCost<>::Create(
      Eigen::Vector2d(500.2, 300.7), Eigen::Vector3d(0.18, 0.0, 0.014), dt_s,
      camera.intrinsics, *camera.camera_from_world));
  ceres::QuaternionManifold quaternion;
  std::vector<const ceres::Manifold*> manifolds = {nullptr, nullptr, nullptr, &quaternion,
                                                    nullptr, nullptr};
  ceres::NumericDiffOptions numeric;  // central differences by default
  ceres::GradientChecker checker(cost.get(), &manifolds, numeric);
  ceres::GradientChecker::ProbeResults results;
  const double* params[] = {s.r0, s.v0, s.g, s.q0, s.w, s.c};
  EXPECT_TRUE(checker.Probe(params, 1e-7, &results)) << results.error_log;
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
      Eigen::Vector2d(0, 0), Eigen::Vector3d::Zero(), 0.0, testing::FacingCamera().intrinsics,
      *testing::FacingCamera().camera_from_world));
  const double* params[] = {s.r0, s.v0, s.g, s.q0, s.w, s.c};
  double residual[2];
  EXPECT_FALSE(cost->Evaluate(params, residual, nullptr));
}

}  // namespace
}  // namespace tumbletrace
