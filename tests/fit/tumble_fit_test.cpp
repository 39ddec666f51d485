// Recovery of a three-dimensional tumble (invented scenarios, tests/support): all three
// CM components, the principal axes and moment ratios, the spin; the model chosen by BIC.
#include <gtest/gtest.h>

#include <cstdio>

#include "support/fit_helpers.hpp"
#include "support/tumble_scenarios.hpp"
#include "tumbletrace/model/mass_properties.hpp"

namespace tumbletrace {
namespace {

struct Truth {
  Eigen::Vector3d cm_body_m;
  PrincipalAxes principal;
  Eigen::Vector3d omega_world_radps;  // at the launch time of the summary
};

Truth TruthOf(const testing::Recovery& r) {
  Truth t;
  t.cm_body_m = r.sim.mass.cm_body_m;
  t.principal = Principal(r.sim.mass.inertia_about_cm_kgm2);
  const RigidState state = StateAt(r.sim, r.summary.launch_time_s);
  t.omega_world_radps = state.world_from_body * state.omega_body_radps;
  return t;
}

// The checks the tumble must pass: CM within 3 sigma and 2 mm per axis, moment ratios
// within 2 %, principal axes within 1 degree, spin rate within 0.5 %.
void ExpectTumbleRecovered(const testing::Recovery& r) {
  const Truth truth = TruthOf(r);
  const FlightSummary& s = r.summary;
  EXPECT_EQ(s.rotation_model, RotationModel::kFreeTop) << s.rotation_reason;
  ASSERT_TRUE(r.fit.cm.unobservable_body.empty());
  for (int i = 0; i < 3; ++i) {
    ASSERT_TRUE(s.cm_body_m[i] && s.cm_sigma_m[i]);
    const double error = *s.cm_body_m[i] - truth.cm_body_m[i];
    std::printf("cm[%d] error %+.3f mm, sigma %.3f mm\n", i, 1e3 * error, 1e3 * *s.cm_sigma_m[i]);
    EXPECT_LT(std::abs(error), 3 * *s.cm_sigma_m[i]);
    EXPECT_LT(std::abs(error), 2e-3);
  }
  ASSERT_TRUE(s.inertia_ratios && s.inertia_sigma_ratios);
  const Eigen::Vector3d& m = truth.principal.moments_kgm2;
  const Eigen::Vector2d true_ratios(m[0] / m[2], m[1] / m[2]);
  for (int k = 0; k < 2; ++k) {
    const double relative = (*s.inertia_ratios)[k] / true_ratios[k] - 1;
    std::printf("ratio %d: %.4f (truth %.4f, sigma %.4f), %+.2f %%\n", k, (*s.inertia_ratios)[k],
                true_ratios[k], (*s.inertia_sigma_ratios)[k], 100 * relative);
    EXPECT_LT(std::abs(relative), 0.02);
  }
  for (int k = 0; k < 3; ++k) {
    ASSERT_TRUE(s.inertia_axes_body[k]);
    const double angle_deg = std::acos(std::min(1.0, std::abs(s.inertia_axes_body[k]->dot(
                                                         truth.principal.axes_body.col(k))))) *
                             180 / M_PI;
    std::printf("axis %d: %.3f deg off (sigma %.3f deg)\n", k, angle_deg,
                s.inertia_sigma_axes_deg[k].value_or(-1));
    EXPECT_LT(angle_deg, 1.0);
  }
  const double rate_truth = truth.omega_world_radps.norm() / (2 * M_PI);
  std::printf("spin %.4f rev/s (truth %.4f), %s\n", s.rate_rev_per_s, rate_truth,
              s.rotation_reason.c_str());
  EXPECT_LT(std::abs(s.rate_rev_per_s / rate_truth - 1), 0.005);
}

TEST(TumbleFit, WobbleSeenObliquelyThroughADistortingLens) {
  const Scenario scenario = testing::WobbleScenario();
  const testing::Recovery r = testing::SimulateAndFit(scenario, testing::DefaultFitOptions(scenario));
  ExpectTumbleRecovered(r);
  EXPECT_TRUE(r.summary.flip_times_s.empty());
}

TEST(TumbleFit, FlipsNearTheIntermediateAxis) {
  const Scenario scenario = testing::FlipScenario();
  const testing::Recovery r = testing::SimulateAndFit(scenario, testing::DefaultFitOptions(scenario));
  ExpectTumbleRecovered(r);
  EXPECT_GE(r.summary.flip_times_s.size(), 1u);
  for (double t : r.summary.flip_times_s) std::printf("flip at %.4f s\n", t);
}

TEST(TumbleFit, SymmetricBodyIsFittedAsASymmetricTop) {
  const Scenario scenario = testing::SymmetricBarScenario();
  const testing::Recovery r = testing::SimulateAndFit(scenario, testing::DefaultFitOptions(scenario));
  const FlightSummary& s = r.summary;
  std::printf("%s\n", s.rotation_reason.c_str());
  EXPECT_EQ(s.rotation_model, RotationModel::kSymmetricTop);
  for (int i = 0; i < 3; ++i) {
    ASSERT_TRUE(s.cm_body_m[i].has_value());
    const double error = *s.cm_body_m[i] - r.sim.mass.cm_body_m[i];
    std::printf("cm[%d] error %+.3f mm, sigma %.3f mm\n", i, 1e3 * error, 1e3 * *s.cm_sigma_m[i]);
    EXPECT_LT(std::abs(error), 3 * *s.cm_sigma_m[i]);
  }
  // The symmetry axis (the bar's length, the smallest moment) is reported; the two equal
  // transverse axes are not.
  ASSERT_TRUE(s.inertia_ratios.has_value());
  ASSERT_TRUE(s.inertia_axes_body[0].has_value());
  EXPECT_FALSE(s.inertia_axes_body[1].has_value());
  EXPECT_FALSE(s.inertia_axes_body[2].has_value());
  EXPECT_GT(std::abs(s.inertia_axes_body[0]->x()), std::cos(M_PI / 180));
  const Eigen::Vector3d m = Principal(r.sim.mass.inertia_about_cm_kgm2).moments_kgm2;
  std::printf("I1/I3 %.4f (truth %.4f), I2/I3 %.4f\n", (*s.inertia_ratios)[0], m[0] / m[2],
              (*s.inertia_ratios)[1]);
  EXPECT_LT(std::abs((*s.inertia_ratios)[0] / (m[0] / m[2]) - 1), 0.02);
  EXPECT_DOUBLE_EQ((*s.inertia_ratios)[1], 1.0);
}

}  // namespace
}  // namespace tumbletrace
