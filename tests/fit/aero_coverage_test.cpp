// Seeded repetitions (long; `ctest -L long`): the drag constant's recovery and interval
// coverage over many noise realisations of the light ball, the vacuum model kept when the
// truth has no drag, and the free-flight window found within 2 frames across seeds.
#include <gtest/gtest.h>

#include "support/air_scenarios.hpp"
#include "support/fit_helpers.hpp"
#include "support/paddle_checks.hpp"
#include "tumbletrace/fit/window.hpp"

namespace tumbletrace {
namespace {

TEST(AeroCoverage, DragConstantOverSeededBalls) {
  const int trials = 100;
  int within_5_percent = 0, covered = 0, drag_chosen = 0;
  double sum = 0.0, sum_sq = 0.0, sum_sigma = 0.0;
  for (int seed = 1; seed <= trials; ++seed) {
    const Scenario s = testing::FoamBallScenario(0.2, 1000 + seed);
    FitOptions options = testing::DefaultFitOptions(s);
    options.rotation = RotationChoice::kConstantSpin;
    const testing::Recovery r = testing::SimulateAndFit(s, options);
    const FlightParameters& p = r.fit.parameters;
    drag_chosen += p.translation_model != TranslationModel::kVacuum;
    if (p.translation_model == TranslationModel::kVacuum) continue;
    const double k = p.aero[0], sigma = std::sqrt(r.fit.covariance(kAero, kAero));
    const double error = k - s.aero.k_per_m;
    within_5_percent += std::abs(error) <= 0.05 * s.aero.k_per_m;
    covered += std::abs(error) <= kZ95 * sigma;
    sum += error;
    sum_sq += error * error;
    sum_sigma += sigma;
  }
  const double n = drag_chosen;
  const double sd = std::sqrt(sum_sq / n - (sum / n) * (sum / n));
  std::printf("light ball, %d seeds: drag chosen %d; k within 5 %%: %d; 95 %% coverage %.3f; "
              "bias %+.2f %% of k; sd / mean sigma %.3f\n",
              trials, drag_chosen, within_5_percent, covered / n,
              100 * sum / n / testing::FoamBallScenario().aero.k_per_m, sd / (sum_sigma / n));
  EXPECT_EQ(drag_chosen, trials);
  EXPECT_GE(within_5_percent, 0.9 * trials);
  EXPECT_GE(covered / n, 0.90);
  EXPECT_LE(covered / n, 0.99);
}

TEST(AeroCoverage, VacuumKeptWhenTheTruthHasNoDrag) {
  const int trials = 200;
  int vacuum = 0;
  for (int seed = 1; seed <= trials; ++seed) {
    const Scenario s = testing::PlanarSpinScenario(0.2, 2000 + seed);
    FitOptions options = testing::DefaultFitOptions(s);
    options.rotation = RotationChoice::kConstantSpin;
    vacuum += testing::SimulateAndFit(s, options).fit.parameters.translation_model ==
              TranslationModel::kVacuum;
  }
  std::printf("no drag in the truth, %d seeds: vacuum kept %d times\n", trials, vacuum);
  EXPECT_GE(vacuum, 0.95 * trials);
}

TEST(AeroCoverage, WindowWithinTwoFramesAcrossSeeds) {
  const int trials = 40;
  int within = 0;
  for (int seed = 1; seed <= trials; ++seed) {
    const Scenario s = testing::HandAndNetScenario(0.2, 3000 + seed);
    const Simulation sim = SimulateFlight(s);
    FitOptions options = testing::DefaultFitOptions(s);
    options.rotation = RotationChoice::kConstantSpin;
    const FreeFlightWindow w = FindFreeFlightWindow(GroupByFrame(sim.tracks, s.capture_fps),
                                                    s.body, {s.camera}, options);
    const bool ok = std::abs(w.start.frame - 45) <= 2 && std::abs(w.end.frame - 204) <= 2;
    within += ok;
    if (!ok) std::printf("seed %d: window %d-%d\n", 3000 + seed, w.start.frame, w.end.frame);
  }
  std::printf("hand and net, %d seeds: window within 2 frames of the truth at both ends %d times\n",
              trials, within);
  EXPECT_GE(within, 0.95 * trials);
}

}  // namespace
}  // namespace tumbletrace

namespace tumbletrace {
namespace {

// The strong-drag tumbling paddle over 50 seeds: rms within 1.2 times the noise, the CM
// within 3 sigma (each component), k within 3 %. With three components at 3 sigma, about
// one seed in a hundred is expected outside by chance; 48 of 50 are required.
TEST(AeroCoverage, StrongDragPaddleOverFiftySeeds) {
  int within = 0, rms_ok = 0, cm_ok = 0, k_ok = 0;
  double worst_rms = 0.0, worst_k = 0.0;
  const int seeds = 50;
  for (int seed = 1; seed <= seeds; ++seed) {
    const testing::PaddleOutcome o = testing::FitFoamPaddle(2000 + seed);
    within += testing::WithinPaddleBounds(o);
    rms_ok += o.rms_over_noise < 1.2;
    cm_ok += o.cm_worst_sigmas < 3.0;
    k_ok += std::abs(o.k_relative_error) < 0.03;
    worst_rms = std::max(worst_rms, o.rms_over_noise);
    worst_k = std::max(worst_k, std::abs(o.k_relative_error));
  }
  std::printf("strong-drag paddle over %d seeds: all bounds %d, rms < 1.2 noise %d (worst %.3f), "
              "CM within 3 sigma %d, k within 3 %% %d (worst %.2f %%)\n",
              seeds, within, rms_ok, worst_rms, cm_ok, k_ok, 100 * worst_k);
  EXPECT_GE(within, 48);
  EXPECT_EQ(rms_ok, seeds);
  EXPECT_EQ(k_ok, seeds);
}

}  // namespace
}  // namespace tumbletrace
