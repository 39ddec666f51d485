// The per-series AR(1) noise model: the recursion for J^T Omega J against a dense T x T
// computation, the Yule-Walker estimate against known AR(1) series, the correction for
// what the fit absorbed, and awkward series (2-3 sightings, gaps, rho near 1, one frame).
#include "tumbletrace/fit/noise_model.hpp"

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <random>

namespace tumbletrace {
namespace {

// Omega[t, t'] = sigma^2 rho^|f_t - f_t'| as a dense matrix (the definition).
Eigen::MatrixXd DenseAr1(const std::vector<int>& frames, double variance, double rho) {
  const int n = static_cast<int>(frames.size());
  Eigen::MatrixXd omega(n, n);
  for (int a = 0; a < n; ++a) {
    for (int b = 0; b < n; ++b) omega(a, b) = variance * std::pow(rho, std::abs(frames[a] - frames[b]));
  }
  return omega;
}

TEST(NoiseModel, RecursionMatchesDenseProductWithGaps) {
  std::mt19937_64 rng(11);
  std::normal_distribution<double> normal;
  const std::vector<int> frames = {0, 1, 2, 5, 6, 9, 10, 30};
  Eigen::MatrixXd j(frames.size(), 3);
  for (Eigen::Index k = 0; k < j.size(); ++k) j.data()[k] = normal(rng);
  for (const double rho : {0.7, -0.4, 0.0, 0.99}) {
    const Eigen::MatrixXd dense = DenseAr1(frames, 0.09, rho) * j;
    const Eigen::MatrixXd recursion = Ar1CovarianceTimes(j, frames, 0.09, rho);
    EXPECT_LT((recursion - dense).cwiseAbs().maxCoeff(), 1e-12 * dense.cwiseAbs().maxCoeff())
        << "rho " << rho;
  }
}

// Two interleaved series (rows not in frame order within J) against the dense block
// matrix; a series of one row contributes sigma^2 j j^T.
TEST(NoiseModel, MeatMatchesDenseBlockDiagonal) {
  std::mt19937_64 rng(12);
  std::normal_distribution<double> normal;
  std::vector<NoiseRow> rows = {{0, 1, 0, 4}, {0, 2, 0, 3}, {0, 1, 0, 2}, {0, 2, 0, 4},
                                {0, 1, 0, 3}, {0, 2, 0, 7}, {0, 3, 1, 5}, {0, 1, 0, 6}};
  Eigen::MatrixXd j(rows.size(), 4);
  for (Eigen::Index k = 0; k < j.size(); ++k) j.data()[k] = normal(rng);
  NoiseModel model;
  model.series.resize(3);
  model.series[0] = {0, 1, 0, {2, 4, 0, 7}, {2, 3, 4, 6}, 0, 0, 0, 0.04, 0.6};
  model.series[1] = {0, 2, 0, {1, 3, 5}, {3, 4, 7}, 0, 0, 0, 0.25, -0.3};
  model.series[2] = {0, 3, 1, {6}, {5}, 0, 0, 0, 0.01, 0.9};
  Eigen::MatrixXd omega = Eigen::MatrixXd::Zero(rows.size(), rows.size());
  for (const SeriesNoise& s : model.series) {
    const Eigen::MatrixXd block = DenseAr1(s.frames, s.variance_px2, s.rho);
    for (size_t a = 0; a < s.rows.size(); ++a) {
      for (size_t b = 0; b < s.rows.size(); ++b) omega(s.rows[a], s.rows[b]) = block(a, b);
    }
  }
  const Eigen::MatrixXd dense = j.transpose() * omega * j;
  EXPECT_LT((Ar1Meat(j, model) - dense).cwiseAbs().maxCoeff(), 1e-12 * dense.cwiseAbs().maxCoeff());
}

// A stationary AR(1) series at `frames`: the exact discrete process (Box & Jenkins, ch. 3).
Eigen::VectorXd Ar1Series(const std::vector<int>& frames, double sigma, double rho,
                          std::mt19937_64* rng) {
  std::normal_distribution<double> normal;
  Eigen::VectorXd e(frames.size());
  e[0] = sigma * normal(*rng);
  for (size_t k = 1; k < frames.size(); ++k) {
    const double a = std::pow(rho, frames[k] - frames[k - 1]);
    e[k] = a * e[k - 1] + sigma * std::sqrt(1 - a * a) * normal(*rng);
  }
  return e;
}

// One series with its mean fitted (J a column of ones): the residuals are e - mean(e).
NoiseModel FitMeanAndEstimate(const Eigen::VectorXd& e, const std::vector<int>& frames,
                              const NoiseModelOptions& options = {}) {
  const Eigen::Index n = e.size();
  const Eigen::MatrixXd j = Eigen::MatrixXd::Ones(n, 1);
  const Eigen::MatrixXd pinv = Eigen::MatrixXd::Constant(1, 1, 1.0 / n);
  const Eigen::VectorXd r = e.array() - e.mean();
  std::vector<NoiseRow> rows;
  for (int f : frames) rows.push_back({0, 1, 0, f});
  return EstimateAr1Noise(r, j, pinv, rows, options);
}

TEST(NoiseModel, YuleWalkerRecoversKnownAr1) {
  std::mt19937_64 rng(13);
  for (const double rho : {0.8, 0.5, 0.0, -0.3}) {
    std::vector<int> frames(20000);
    for (int k = 0; k < 20000; ++k) frames[k] = k;
    const NoiseModel m = FitMeanAndEstimate(Ar1Series(frames, 0.2, rho, &rng), frames);
    ASSERT_EQ(m.series.size(), 1u);
    // Standard error of the lag-1 estimate: sqrt((1 - rho^2) / T) (Box & Jenkins, from
    // memory): at most 0.0071 here; 4 of them.
    EXPECT_NEAR(m.series[0].rho, rho, 0.03) << rho;
    // The variance of the mean of T AR(1) terms is about (1+rho)/(1-rho) / T, so the
    // variance estimate is good to a few percent.
    EXPECT_NEAR(std::sqrt(m.series[0].variance_px2), 0.2, 0.2 * 0.04) << rho;
  }
}

// Gaps: a fifth of the frames dropped at random; rho from the pairs one frame apart.
TEST(NoiseModel, YuleWalkerWithGaps) {
  std::mt19937_64 rng(14);
  std::uniform_real_distribution<double> unit;
  std::vector<int> frames;
  for (int k = 0; k < 25000; ++k) {
    if (unit(rng) > 0.2) frames.push_back(k);
  }
  const NoiseModel m = FitMeanAndEstimate(Ar1Series(frames, 0.1, 0.6, &rng), frames);
  EXPECT_NEAR(m.series[0].rho, 0.6, 0.03);
  EXPECT_LT(m.series[0].lag1_pairs, static_cast<int>(frames.size()) - 1);
}

// What the fit absorbs: white noise in 200 series of 40 residuals, each fitted with its
// own line (2 parameters). Residuals of a fitted line are negatively correlated at lag 1
// (by about -p/T); the leverage correction removes it, so the mean estimate is near 0.
TEST(NoiseModel, LeverageCorrectionRemovesTheFitsOwnCorrelation) {
  std::mt19937_64 rng(15);
  std::normal_distribution<double> normal;
  constexpr int kSeries = 200, kT = 40;
  Eigen::MatrixXd j = Eigen::MatrixXd::Zero(kSeries * kT, 2 * kSeries);
  Eigen::VectorXd e(kSeries * kT);
  std::vector<NoiseRow> rows;
  for (int s = 0; s < kSeries; ++s) {
    for (int t = 0; t < kT; ++t) {
      j(s * kT + t, 2 * s) = 1.0;
      j(s * kT + t, 2 * s + 1) = (t - kT / 2) / 10.0;
      e[s * kT + t] = 0.3 * normal(rng);
      rows.push_back({0, s, 0, t});
    }
  }
  const Eigen::MatrixXd pinv = (j.transpose() * j).inverse();
  const Eigen::VectorXd r = e - j * (pinv * (j.transpose() * e));
  const NoiseModel m = EstimateAr1Noise(r, j, pinv, rows);
  double mean_raw = 0.0, mean_uncorrected = 0.0;
  for (const SeriesNoise& s : m.series) {
    mean_raw += s.raw_rho / kSeries;
    double c0 = 0, c1 = 0;
    for (size_t k = 0; k < s.rows.size(); ++k) {
      c0 += r[s.rows[k]] * r[s.rows[k]];
      if (k + 1 < s.rows.size()) c1 += r[s.rows[k]] * r[s.rows[k + 1]];
    }
    mean_uncorrected += c1 / c0 / kSeries;
  }
  // Standard error of the mean of 200 estimates from 39 pairs: about 0.16 / sqrt(200) = 0.011.
  EXPECT_NEAR(mean_raw, 0.0, 0.035);
  EXPECT_LT(mean_uncorrected, -0.04);  // the bias the correction removes (about -0.07)
  EXPECT_NEAR(std::sqrt(m.pooled_variance_px2), 0.3, 0.3 * 0.03);
}

// With white noise the sandwich is the white-noise covariance s^2 (J^T J)^-1 to within the
// estimates' own noise.
TEST(NoiseModel, WhiteNoiseSandwichMatchesPlainCovariance) {
  std::mt19937_64 rng(16);
  std::normal_distribution<double> normal;
  constexpr int kSeries = 12, kT = 250;
  Eigen::MatrixXd j(kSeries * kT, 3);
  Eigen::VectorXd e(kSeries * kT);
  std::vector<NoiseRow> rows;
  for (int s = 0; s < kSeries; ++s) {
    for (int t = 0; t < kT; ++t) {
      const double tau = (t - kT / 2) / 100.0, phase = 0.3 * t + s;
      j.row(s * kT + t) << 1.0, tau, std::cos(phase);
      e[s * kT + t] = 0.2 * normal(rng);
      rows.push_back({0, s / 2, s % 2, t});
    }
  }
  const Eigen::MatrixXd pinv = (j.transpose() * j).inverse();
  const Eigen::VectorXd r = e - j * (pinv * (j.transpose() * e));
  const NoiseModel m = EstimateAr1Noise(r, j, pinv, rows);
  const Eigen::MatrixXd plain = m.pooled_variance_px2 * pinv;
  const Eigen::MatrixXd sandwich = SandwichCovariance(j, pinv, m);
  for (int k = 0; k < 3; ++k) {
    EXPECT_NEAR(std::sqrt(sandwich(k, k) / plain(k, k)), 1.0, 0.06) << k;
  }
  EXPECT_LT(std::abs(m.median_rho), 0.06);
}

// Awkward series: 2 and 3 sightings, a single frame, a gap-only series (no lag-1 pairs),
// and one whose rho is near 1. Everything finite, rho in bounds, the short series pulled
// towards the pooled values, the sandwich positive semi-definite.
TEST(NoiseModel, AwkwardSeries) {
  std::mt19937_64 rng(17);
  std::normal_distribution<double> normal;
  struct Spec { int marker; std::vector<int> frames; double rho; };
  std::vector<Spec> specs = {{1, {}, 0.5}, {2, {10, 11}, 0.5}, {3, {40, 41, 42}, 0.5},
                             {4, {77}, 0.5}, {5, {0, 3, 6, 9, 12}, 0.5}, {6, {}, 0.9995}};
  for (int f = 0; f < 300; ++f) specs[0].frames.push_back(f);
  for (int f = 0; f < 300; ++f) specs[5].frames.push_back(f);
  std::vector<NoiseRow> rows;
  std::vector<double> e_all;
  std::vector<double> tau;
  for (const Spec& s : specs) {
    const Eigen::VectorXd e = Ar1Series(s.frames, 0.2, s.rho, &rng);
    for (size_t k = 0; k < s.frames.size(); ++k) {
      rows.push_back({0, s.marker, 0, s.frames[k]});
      e_all.push_back(e[k]);
      tau.push_back(s.frames[k] / 100.0);
    }
  }
  const Eigen::Index n = static_cast<Eigen::Index>(rows.size());
  Eigen::MatrixXd j(n, 2);
  for (Eigen::Index i = 0; i < n; ++i) j.row(i) << 1.0, tau[i];
  const Eigen::VectorXd e = Eigen::Map<const Eigen::VectorXd>(e_all.data(), n);
  const Eigen::MatrixXd pinv = (j.transpose() * j).inverse();
  const Eigen::VectorXd r = e - j * (pinv * (j.transpose() * e));
  const NoiseModelOptions options;
  const NoiseModel m = EstimateAr1Noise(r, j, pinv, rows, options);
  ASSERT_EQ(m.series.size(), specs.size());
  for (const SeriesNoise& s : m.series) {
    EXPECT_TRUE(std::isfinite(s.rho) && std::isfinite(s.variance_px2)) << s.marker_id;
    EXPECT_GT(s.variance_px2, 0.0) << s.marker_id;
    EXPECT_GE(s.rho, options.rho_min);
    EXPECT_LE(s.rho, options.rho_max);
  }
  // The single sighting and the gap-only series have no pairs: the pooled rho.
  EXPECT_DOUBLE_EQ(m.series[3].rho, m.pooled_rho);
  EXPECT_EQ(m.series[4].lag1_pairs, 0);
  EXPECT_DOUBLE_EQ(m.series[4].rho, m.pooled_rho);
  // Two sightings: one pair, whose estimate's sampling variance (about 1) dwarfs the
  // spread of the series' rho, so it stays near the pooled value.
  EXPECT_EQ(m.series[1].lag1_pairs, 1);
  EXPECT_LE(std::abs(m.series[1].rho - m.pooled_rho),
            0.5 * std::abs(m.series[1].raw_rho - m.pooled_rho) + 1e-12);
  // Near 1: held at the bound or just under it.
  EXPECT_GT(m.series[5].rho, 0.95);
  const Eigen::MatrixXd sandwich = SandwichCovariance(j, pinv, m);
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(sandwich);
  EXPECT_GT(eig.eigenvalues().minCoeff(), 0.0);
  EXPECT_TRUE(sandwich.allFinite());
}

// Series whose rho truly differ keep their own; series that share one rho share the
// pooled estimate (no spread from sampling noise alone).
TEST(NoiseModel, SeriesKeepTheirOwnRhoOnlyWhenTheyDiffer) {
  for (const bool differ : {true, false}) {
    std::mt19937_64 rng(differ ? 18 : 19);
    std::vector<int> frames(250);
    for (int k = 0; k < 250; ++k) frames[k] = k;
    std::vector<NoiseRow> rows;
    std::vector<double> e_all, truth;
    for (int s = 0; s < 12; ++s) {
      const double rho = differ ? (s % 2 ? 0.8 : 0.1) : 0.5;
      truth.push_back(rho);
      const Eigen::VectorXd e = Ar1Series(frames, 0.2, rho, &rng);
      for (int k = 0; k < 250; ++k) {
        rows.push_back({0, s, 0, k});
        e_all.push_back(e[k]);
      }
    }
    const Eigen::Index n = static_cast<Eigen::Index>(rows.size());
    const Eigen::MatrixXd j = Eigen::MatrixXd::Ones(n, 1);
    const Eigen::MatrixXd pinv = Eigen::MatrixXd::Constant(1, 1, 1.0 / n);
    const Eigen::VectorXd e = Eigen::Map<const Eigen::VectorXd>(e_all.data(), n);
    const NoiseModel m = EstimateAr1Noise(e.array() - e.mean(), j, pinv, rows);
    double low = 1, high = -1;
    for (size_t s = 0; s < m.series.size(); ++s) {
      EXPECT_NEAR(m.series[s].rho, truth[s], 0.12) << "differ " << differ << " series " << s;
      low = std::min(low, m.series[s].rho);
      high = std::max(high, m.series[s].rho);
    }
    if (!differ) EXPECT_LT(high - low, 0.05);  // own estimates alone spread by about 0.2
  }
}

}  // namespace
}  // namespace tumbletrace

namespace tumbletrace {
namespace {

// The meat with a per-series constant offset: the dense Omega plus tau^2 on each series'
// block of ones (the definition).
TEST(NoiseModel, MeatWithOffsetsMatchesDenseDefinition) {
  std::mt19937_64 rng(21);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd j(7, 3);
  for (Eigen::Index k = 0; k < j.size(); ++k) j.data()[k] = normal(rng);
  NoiseModel model;
  model.series.resize(2);
  model.series[0] = {0, 1, 0, {0, 2, 4}, {1, 2, 5}, 0, 0, 0, 0.04, 0.5};
  model.series[1] = {0, 2, 1, {1, 3, 5, 6}, {0, 1, 2, 3}, 0, 0, 0, 0.09, 0.2};
  model.offset_variance_px2 = 0.0025;
  Eigen::MatrixXd omega = Eigen::MatrixXd::Zero(7, 7);
  for (const SeriesNoise& s : model.series) {
    const Eigen::MatrixXd block = DenseAr1(s.frames, s.variance_px2, s.rho);
    for (size_t a = 0; a < s.rows.size(); ++a) {
      for (size_t b = 0; b < s.rows.size(); ++b) {
        omega(s.rows[a], s.rows[b]) = block(a, b) + model.offset_variance_px2;
      }
    }
  }
  const Eigen::MatrixXd dense = j.transpose() * omega * j;
  EXPECT_LT((Ar1Meat(j, model) - dense).cwiseAbs().maxCoeff(), 1e-12 * dense.cwiseAbs().maxCoeff());
}

// 16 series of 150 frames, white noise 0.1 px plus a constant offset per series drawn with
// sigma 0.05 px, fitted with a common level and a common slope (the fit absorbs the
// offsets' mean and trend, not their spread). Over 200 draws the moment estimate of tau^2
// averages within 10 % of 0.0025, and the sandwich's variance of the slope covers the
// draws' spread: measured 1.18 times it, for the offsets also raise each series' AR(1)
// level and rho (a conservative double count, 9 % in sigma), against a sampling error of
// about 0.1 for a variance from 200 draws; without the offset term it is 0.10. With no
// offsets, tau^2 averages near 0.
TEST(NoiseModel, OffsetVarianceIsRecoveredAndEntersTheSandwich) {
  constexpr int kSeries = 16, kT = 150, kDraws = 200;
  std::vector<NoiseRow> rows;
  Eigen::MatrixXd j(kSeries * kT, 2);
  for (int s = 0; s < kSeries; ++s) {
    for (int t = 0; t < kT; ++t) {
      // Each series seen over its own stretch of the clip, so the slope's column differs.
      const int frame = 10 * s + t;
      j.row(s * kT + t) << 1.0, frame / 100.0;
      rows.push_back({0, s, 0, frame});
    }
  }
  const Eigen::MatrixXd pinv = (j.transpose() * j).inverse();
  for (const double offset_sigma : {0.05, 0.0}) {
    std::mt19937_64 rng(22);
    std::normal_distribution<double> normal;
    double mean_tau2 = 0.0, mean_slope_variance = 0.0, sum_slope = 0.0, sum_slope2 = 0.0;
    double mean_ar_only_variance = 0.0;
    for (int draw = 0; draw < kDraws; ++draw) {
      Eigen::VectorXd e(kSeries * kT);
      for (int s = 0; s < kSeries; ++s) {
        const double c = offset_sigma * normal(rng);
        for (int t = 0; t < kT; ++t) e[s * kT + t] = c + 0.1 * normal(rng);
      }
      const Eigen::VectorXd theta = pinv * (j.transpose() * e);
      const Eigen::VectorXd r = e - j * theta;
      const NoiseModel m = EstimateAr1Noise(r, j, pinv, rows);
      mean_tau2 += m.offset_variance_px2 / kDraws;
      mean_slope_variance += SandwichCovariance(j, pinv, m)(1, 1) / kDraws;
      NoiseModel ar_only = m;
      ar_only.offset_variance_px2 = 0.0;
      mean_ar_only_variance += SandwichCovariance(j, pinv, ar_only)(1, 1) / kDraws;
      sum_slope += theta[1];
      sum_slope2 += theta[1] * theta[1];
    }
    const double spread = sum_slope2 / kDraws - std::pow(sum_slope / kDraws, 2);
    if (offset_sigma > 0) {
      EXPECT_NEAR(mean_tau2, 0.0025, 0.00025);
      std::printf("slope variance / spread: %.3f with the offsets, %.3f without\n",
                  mean_slope_variance / spread, mean_ar_only_variance / spread);
      EXPECT_GT(mean_slope_variance / spread, 0.85);
      EXPECT_LT(mean_ar_only_variance / spread, 0.85);
      EXPECT_LT(mean_slope_variance / spread, 1.4);
    } else {
      EXPECT_LT(mean_tau2, 0.0002);
    }
  }
}

// The floor: an offset the fit absorbs leaves no trace, so the session's value is the least.
TEST(NoiseModel, OffsetFloorIsTheLeastValue) {
  std::mt19937_64 rng(23);
  std::normal_distribution<double> normal;
  std::vector<int> frames(200);
  for (int k = 0; k < 200; ++k) frames[k] = k;
  NoiseModelOptions options;
  options.min_offset_sigma_px = 0.04;
  const NoiseModel m = FitMeanAndEstimate(Ar1Series(frames, 0.1, 0.0, &rng), frames, options);
  EXPECT_DOUBLE_EQ(m.offset_variance_px2, 0.04 * 0.04);
}

}  // namespace
}  // namespace tumbletrace
