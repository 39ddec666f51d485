// The fit's uncertainty when the track errors are not independent: AR(1) series per marker
// and coordinate with a noise level of their own per marker (tests/support/
// correlated_noise.hpp). A few seeds each, in the default suite; the long version over
// 100+ seeds is in coverage_test.cpp.
#include <gtest/gtest.h>

#include <cstdio>

#include "support/correlated_noise.hpp"
#include "support/scenarios.hpp"

namespace tumbletrace {
namespace {

// Standardised errors (estimate - truth) / sigma of the observable CM components, the
// launch speed and the spin rate.
std::vector<double> StandardisedErrors(const testing::Recovery& r, const FlightSummary& s) {
  std::vector<double> z;
  for (int i = 0; i < 3; ++i) {
    if (s.cm_body_m[i] && s.cm_sigma_m[i]) {
      z.push_back((*s.cm_body_m[i] - r.sim.mass.cm_body_m[i]) / *s.cm_sigma_m[i]);
    }
  }
  const RigidState& launch = r.sim.frames.front().state;
  z.push_back((s.launch_speed_mps - launch.velocity_world_mps.norm()) / s.launch_sigma_speed_mps);
  z.push_back((s.rate_rev_per_s - launch.omega_body_radps.norm() / (2 * M_PI)) /
              s.sigma_rate_rev_per_s);
  return z;
}

FitOptions ConstantSpinOptions(const Scenario& s) {
  FitOptions o = testing::DefaultFitOptions(s);
  o.rotation = RotationChoice::kConstantSpin;
  o.drag = DragChoice::kNone;
  return o;
}

// rho = 0.8, markers at 0.05-0.3 px, 8 seeds: the mean squared standardised error (a
// chi-square per degree of freedom, 1 when the sigmas are right) is near 1 with the
// sandwich and far above it with the white-noise covariance.
TEST(CorrelatedNoise, SandwichIsHonestWhereWhiteNoiseIsNot) {
  const Scenario scenario = testing::PlanarSpinScenario();
  testing::CorrelatedNoise noise;
  noise.rho = 0.8;
  noise.sigma_px = testing::SpreadSigma(0.05, 0.3, static_cast<int>(scenario.body.markers.size()));
  double sum_new = 0, sum_old = 0, factor_x = 0;
  int n = 0;
  constexpr int kSeeds = 8;
  for (int seed = 0; seed < kSeeds; ++seed) {
    const auto r = testing::SimulateAndFitWithNoise(scenario, ConstantSpinOptions(scenario), noise,
                                                    700 + seed);
    const FlightSummary old_summary =
        Summarise(WithWhiteNoiseCovariance(r.fit), scenario.body);
    const std::vector<double> z_new = StandardisedErrors(r, r.summary);
    const std::vector<double> z_old = StandardisedErrors(r, old_summary);
    for (size_t k = 0; k < z_new.size(); ++k) {
      sum_new += z_new[k] * z_new[k];
      sum_old += z_old[k] * z_old[k];
      ++n;
    }
    factor_x += r.fit.variance_factor_cm.x() / kSeeds;
    EXPECT_NEAR(r.fit.noise.median_rho, 0.8, 0.1) << "seed " << seed;
  }
  std::printf("rho 0.8: mean z^2 sandwich %.2f, white noise %.2f over %d; mean variance "
              "factor of c_x %.2f\n",
              sum_new / n, sum_old / n, n, factor_x);
  // n = 32 (not independent within a fit): chi-square / n has sd about 0.25-0.4 here.
  EXPECT_GT(sum_new / n, 0.4);
  EXPECT_LT(sum_new / n, 2.0);
  EXPECT_GT(sum_old / n, 2.5);
  EXPECT_GT(factor_x, 2.0);
}

// Independent errors of one level: the sandwich's sigmas within a few percent of the
// white-noise ones (no needless inflation).
TEST(CorrelatedNoise, WhiteNoiseKeepsTheSigmas) {
  const Scenario scenario = testing::ObliqueSpinScenario();
  testing::CorrelatedNoise noise;  // rho 0, 0.2 px
  for (int seed = 0; seed < 3; ++seed) {
    const auto r = testing::SimulateAndFitWithNoise(scenario, ConstantSpinOptions(scenario), noise,
                                                    800 + seed);
    const FlightSummary old_summary = Summarise(WithWhiteNoiseCovariance(r.fit), scenario.body);
    for (int i = 0; i < 2; ++i) {
      EXPECT_NEAR(*r.summary.cm_sigma_m[i] / *old_summary.cm_sigma_m[i], 1.0, 0.07)
          << "seed " << seed << " axis " << i;
    }
    EXPECT_NEAR(r.summary.launch_sigma_speed_mps / old_summary.launch_sigma_speed_mps, 1.0, 0.07);
    EXPECT_NEAR(r.summary.sigma_rate_rev_per_s / old_summary.sigma_rate_rev_per_s, 1.0, 0.07);
    EXPECT_LT(std::abs(r.fit.noise.median_rho), 0.07);
    std::printf("white noise seed %d: sigma ratio c_x %.3f c_y %.3f speed %.3f spin %.3f\n", seed,
                *r.summary.cm_sigma_m[0] / *old_summary.cm_sigma_m[0],
                *r.summary.cm_sigma_m[1] / *old_summary.cm_sigma_m[1],
                r.summary.launch_sigma_speed_mps / old_summary.launch_sigma_speed_mps,
                r.summary.sigma_rate_rev_per_s / old_summary.sigma_rate_rev_per_s);
  }
}

// Markers at 0.05-0.3 px: measured against one pooled scale the noisiest markers' honest
// sightings are set aside by the percent; against their own, about 1 in 10 000 (the
// threshold's design), while gross outliers are still all found.
TEST(CorrelatedNoise, NoisierMarkersAreNotRejected) {
  const Scenario scenario = testing::PlanarSpinScenario();
  testing::CorrelatedNoise noise;
  noise.sigma_px = testing::SpreadSigma(0.05, 0.3, static_cast<int>(scenario.body.markers.size()));
  FitOptions per_marker = ConstantSpinOptions(scenario);
  FitOptions pooled = per_marker;
  pooled.outlier_scale.floor_fraction = 1.0;  // every marker at the pooled scale
  pooled.outlier_scale.cap_factor = 1.0;
  const auto a = testing::SimulateAndFitWithNoise(scenario, per_marker, noise, 901);
  const auto b = testing::SimulateAndFitWithNoise(scenario, pooled, noise, 901);
  std::printf("outliers set aside: per-marker scale %d, pooled scale %d of %d\n", a.fit.outliers,
              b.fit.outliers, a.fit.observations);
  EXPECT_LE(a.fit.outliers, 3);
  EXPECT_GT(b.fit.outliers, 0.01 * b.fit.observations);
}

TEST(CorrelatedNoise, GrossOutliersAreStillFound) {
  Scenario scenario = testing::PlanarSpinScenario();
  scenario.tracks_sigma_px = 0.0;
  testing::CorrelatedNoise noise;
  noise.rho = 0.5;
  noise.sigma_px = testing::SpreadSigma(0.05, 0.3, static_cast<int>(scenario.body.markers.size()));
  testing::Recovery r;
  r.sim = SimulateFlight(scenario);
  testing::AddCorrelatedNoise(&r.sim.tracks, noise, 902);
  const int corrupted = testing::CorruptTracks(&r.sim.tracks, 0.02, 903);
  r.fit = FitFreeFlight(GroupByFrame(r.sim.tracks, scenario.capture_fps), scenario.body,
                        scenario.camera, ConstantSpinOptions(scenario));
  int flagged_corrupt = 0;
  for (const ResidualRecord& rec : r.fit.residuals) {
    flagged_corrupt += rec.outlier && rec.residual_px.norm() > 10.0;
  }
  EXPECT_EQ(flagged_corrupt, corrupted);
  EXPECT_LE(r.fit.outliers, corrupted + 3);
}

}  // namespace
}  // namespace tumbletrace
