#include "tumbletrace/fit/summary.hpp"

#include <gtest/gtest.h>

#include "support/fit_helpers.hpp"
#include "support/scenarios.hpp"

namespace tumbletrace {
namespace {

TEST(Summary, FitReturnsTheCmLinePointNearestTheBodyOriginWithUnchangedPredictions) {
  const Scenario s = testing::ObliqueSpinScenario(0.2, 21);
  const Simulation sim = SimulateFlight(s);
  const auto frames = GroupByFrame(sim.tracks, s.capture_fps);
  const FitResult fit = FitFreeFlight(frames, s.body, s.camera, testing::DefaultFitOptions(s));
  ASSERT_EQ(fit.cm.unobservable_body.size(), 1u);
  EXPECT_NEAR(fit.parameters.cm_body_m.dot(fit.cm.unobservable_body[0]), 0.0, 1e-12);
  // The move along the line changed no prediction: the residuals at the returned
  // parameters are those the fit reports.
  double sum_sq = 0.0;
  int n = 0;
  for (const ResidualRecord& r : fit.residuals) {
    if (r.outlier) continue;
    Eigen::Vector2d predicted;
    ASSERT_TRUE(fit.parameters.PredictPixel(s.camera, s.body.FindMarker(r.marker_id)->at_body_m,
                                            r.time_s, &predicted));
    sum_sq += (predicted - r.observed_px).squaredNorm();
    ++n;
  }
  EXPECT_NEAR(std::sqrt(sum_sq / (2.0 * n)), fit.rms_px, 1e-9);
}

TEST(Summary, CeresCovarianceAgreesWithTheSchurComplementOnObservableDirections) {
  // Two routes to the CM's uncertainty: Ceres' pseudo-inverse of J^T J (then projected)
  // and the inverse of the Schur complement of c, from the same Jacobian. Both under
  // independent noise of one level (the white-noise covariance: the information is
  // scaled by sigma_px).
  const Scenario s = testing::PlanarSpinScenario(0.2, 22);
  const auto r = testing::SimulateAndFit(s, testing::DefaultFitOptions(s));
  const FitResult white = WithWhiteNoiseCovariance(r.fit);
  const CmObservability& cm = white.cm;
  int observable = 0;
  for (int k = 0; k < 3; ++k) {
    const Eigen::Vector3d e = cm.information_eigenvectors.col(k);
    bool is_null = false;
    for (const auto& u : cm.unobservable_body) is_null |= std::abs(u.dot(e)) > 0.5;
    if (is_null) continue;
    ++observable;
    const double variance = e.dot(cm.covariance_m2 * e);
    EXPECT_NEAR(variance * cm.information_eigenvalues[k], 1.0, 1e-6);
  }
  EXPECT_EQ(observable, 2);
}

TEST(Summary, LaunchVelocitySigmaWithFixedGravityIsThatOfV0) {
  const Scenario s = testing::PlanarSpinScenario(0.2, 23);
  const auto r = testing::SimulateAndFit(s, testing::DefaultFitOptions(s));
  for (int i = 0; i < 3; ++i) {
    EXPECT_NEAR(r.summary.launch_sigma_velocity_mps[i],
                std::sqrt(r.fit.covariance(kV0 + i, kV0 + i)), 1e-9);
  }
  EXPECT_GT(r.summary.sigma_rate_rev_per_s, 0.0);
  // The launch position along the spin axis (world y) is as undetermined as c_z.
  EXPECT_FALSE(r.summary.launch_position_m[1].has_value());
  EXPECT_TRUE(r.summary.launch_position_m[0].has_value());
}

}  // namespace
}  // namespace tumbletrace
