// The noise model behind the fit's covariance: residual series with their own variance and
// a first-order autoregressive correlation in time, entering a sandwich covariance.
//
// The fit is ordinary least squares, theta_hat = argmin |r(theta)|^2. To first order about
// the solution, theta_hat - theta = -A^+ J^T e with A = J^T J and e the pixel errors, so
//
//   Cov(theta_hat) = A^+ (J^T Omega J) A^+,   Omega = Cov(e)
//
// (the "sandwich" of White 1980, Econometrica 48, 817-838, here with a parametric Omega).
// With independent errors of one variance, Omega = s^2 I and it is the usual s^2 A^+.
//
// Omega is block-diagonal over residual series: one per camera x marker x image coordinate,
// its rows ordered by frame. Each block is a stationary AR(1) sampled at the series' frames,
//
//   Omega_s[t, t'] = sigma_s^2 rho_s^|f_t - f_t'|                 (Box & Jenkins, Time
//                                                                  Series Analysis, ch. 3)
//
// so a gap of g frames correlates as rho^g. sigma_s^2 and rho_s come from the series'
// residuals by Yule-Walker (gamma_1 / gamma_0), each corrected for what the fit absorbed:
// the residuals are r = (I - H) e with H = J A^+ J^T, so for white noise
// E[sum r_t^2] = sigma^2 (T - sum H_tt) and E[sum r_t r_t+1] = -sigma^2 sum H_t,t+1 (the
// residual maker's expectation, Seber & Lee, Linear Regression Analysis, ch. 3, from
// memory). A short series borrows from the pooled estimates: the variance by a prior of
// `prior_residuals` residuals at the pooled variance (Smyth 2004, Stat. Appl. Genet. Mol.
// Biol. 3(1), art. 3: the moderated variance). Each rho is pulled towards the pooled rho
// by the share of its sampling variance v_s = (1 - rho^2) / pairs (Bartlett's formula, Box &
// Jenkins ch. 6) in v_s + tau^2, tau^2 the spread of the series' true rho by moments
// (DerSimonian & Laird 1986, Control. Clin. Trials 7, 177-188): series that differ by no
// more than their noise share the pooled rho, a series of a few sightings takes it, and
// series that truly differ keep their own. rho is bounded to [rho_min, rho_max].
//
// A marker's centre can also be off by an amount that stays through the flight (a sphere
// lit from one side looks the same from every side of the body, so its shading bias is
// nearly fixed in the image, and differs from marker to marker by their blur and place in
// the field): an AR(1) decays and cannot hold it. Each series therefore also carries a
// constant offset c_s, drawn with a variance tau^2 shared by all series (a random effect):
//
//   Omega_s = AR(1) as above + tau^2 1 1^T
//
// tau^2 by the method of moments on the series' residual sums: with u_s = (I - H) 1_s,
// E[(1_s^T r)^2] = u_s^T Omega_AR u_s + tau^2 sum_s' (1_s'^T u_s)^2; summed over the
// series and solved for tau^2, at least 0. (The offsets' share of each series' level also
// enters its AR(1) estimate; the moment equation subtracts that model's expectation, so
// the two together match the residual sums.) In the meat it adds tau^2 g_s g_s^T per
// series, g_s = J_s^T 1.
//
// J_s^T Omega_s J_s needs no T x T matrix: (Omega_s J_s)_t = sigma_s^2 (j_t + F_t + B_t)
// with the forward and backward sums F_t = rho^(f_t - f_t-1) (F_t-1 + j_t-1), B_t =
// rho^(f_t+1 - f_t) (B_t+1 + j_t+1): O(T p) for Omega_s J_s, O(T p^2) for the product.
#pragma once

#include <Eigen/Core>
#include <vector>

namespace tumbletrace {

// Where a residual component belongs: its series (camera, marker, coordinate 0 = x,
// 1 = y) and its frame in that camera's clip. A series holds at most one row per frame.
struct NoiseRow {
  int camera = 0;
  int marker_id = 0;
  int coordinate = 0;
  int frame = 0;
};

struct NoiseModelOptions {
  double prior_residuals = 4.0;  // pseudo-residuals at the pooled variance (shrinkage)
  double rho_min = -0.9;
  double rho_max = 0.99;         // a series' bias that hardly changes over the window
  // The least tau (px): offsets the fit absorbs leave no trace in the residuals, so the
  // moment estimate cannot see them; what the detector is known to leave is given here.
  double min_offset_sigma_px = 0.0;
};

// One series' estimates.
struct SeriesNoise {
  int camera = 0;
  int marker_id = 0;
  int coordinate = 0;
  std::vector<int> rows;          // its residual components, in frame order
  std::vector<int> frames;        // their frames
  int lag1_pairs = 0;             // neighbours one frame apart
  double leverage = 0.0;          // sum of H_tt over the series: parameters it carries
  double raw_rho = 0.0;           // its own Yule-Walker estimate (0 without pairs)
  double variance_px2 = 0.0;      // sigma_s^2 (shrunk)
  double rho = 0.0;               // rho_s (shrunk and bounded)
};

struct NoiseModel {
  std::vector<SeriesNoise> series;
  double pooled_variance_px2 = 0.0;  // sum r^2 / (n - sum H_tt): the white-noise s^2
  double pooled_rho = 0.0;
  double median_rho = 0.0;           // over the series with lag-1 pairs (0 if none)
  double max_rho = 0.0;
  double offset_variance_px2 = 0.0;  // tau^2: a per-series constant offset's variance
};

// Estimates the model from the residuals `residuals_px` (one per row of `jacobian`), the
// Jacobian at the solution and `information_pinv` = (J^T J)^+ (the fit's pseudo-inverse,
// with its null space), rows labelled by `rows`.
NoiseModel EstimateAr1Noise(const Eigen::VectorXd& residuals_px, const Eigen::MatrixXd& jacobian,
                            const Eigen::MatrixXd& information_pinv,
                            const std::vector<NoiseRow>& rows,
                            const NoiseModelOptions& options = {});

// Omega_s J_s for one series: rows `jacobian_rows` (T x p, in frame order) at `frames`, by
// the forward and backward recursions.
Eigen::MatrixXd Ar1CovarianceTimes(const Eigen::MatrixXd& jacobian_rows,
                                   const std::vector<int>& frames, double variance_px2,
                                   double rho);

// J^T Omega J summed over the series of `model`.
Eigen::MatrixXd Ar1Meat(const Eigen::MatrixXd& jacobian, const NoiseModel& model);

// The sandwich A^+ (J^T Omega J) A^+ in the columns of `jacobian`.
Eigen::MatrixXd SandwichCovariance(const Eigen::MatrixXd& jacobian,
                                   const Eigen::MatrixXd& information_pinv,
                                   const NoiseModel& model);

}  // namespace tumbletrace
