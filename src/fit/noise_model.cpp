#include "tumbletrace/fit/noise_model.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <tuple>

namespace tumbletrace {
namespace {

// The rows of each (camera, marker, coordinate), in frame order.
std::vector<SeriesNoise> GroupSeries(const std::vector<NoiseRow>& rows) {
  std::map<std::tuple<int, int, int>, std::vector<int>> of_key;
  for (int i = 0; i < static_cast<int>(rows.size()); ++i) {
    of_key[{rows[i].camera, rows[i].marker_id, rows[i].coordinate}].push_back(i);
  }
  std::vector<SeriesNoise> out;
  for (auto& [key, members] : of_key) {
    std::stable_sort(members.begin(), members.end(),
                     [&](int a, int b) { return rows[a].frame < rows[b].frame; });
    SeriesNoise s;
    std::tie(s.camera, s.marker_id, s.coordinate) = key;
    s.rows = members;
    for (int i : members) s.frames.push_back(rows[i].frame);
    out.push_back(std::move(s));
  }
  return out;
}

// A series' sums: sum r_t^2 and sum H_tt over its rows; sum r_t r_t+1 and sum H_t,t+1 over
// its neighbours one frame apart.
struct SeriesSums {
  double sum_sq = 0.0, leverage = 0.0, lag1 = 0.0, pair_leverage = 0.0;
  int pairs = 0;
};

SeriesSums SumsOf(const SeriesNoise& s, const Eigen::VectorXd& r, const Eigen::MatrixXd& j,
                  const Eigen::MatrixXd& j_pinv) {
  SeriesSums out;
  for (size_t k = 0; k < s.rows.size(); ++k) {
    const int a = s.rows[k];
    out.sum_sq += r[a] * r[a];
    out.leverage += j_pinv.row(a).dot(j.row(a));
    if (k + 1 < s.rows.size() && s.frames[k + 1] - s.frames[k] == 1) {
      const int b = s.rows[k + 1];
      out.lag1 += r[a] * r[b];
      out.pair_leverage += j_pinv.row(a).dot(j.row(b));
      ++out.pairs;
    }
  }
  return out;
}

// Sampling variance of a lag-1 estimate from n pairs: (1 - rho^2) / n (Bartlett's formula
// for an AR(1), Box & Jenkins ch. 6, from memory), at the pooled rho.
double RhoSamplingVariance(const NoiseModel& model, const SeriesNoise& s) {
  return (1.0 - model.pooled_rho * model.pooled_rho) / std::max(s.lag1_pairs, 1);
}

// How much the series' true rho differ: DerSimonian & Laird's moment estimate of the
// between-study variance (1986), with weights w_s = 1 / v_s:
// tau^2 = max(0, (Q - (k - 1)) / (sum w - sum w^2 / sum w)), Q = sum w_s (raw_s - mean_w)^2.
double BetweenSeriesRhoVariance(const NoiseModel& model) {
  double sum_w = 0.0, sum_w2 = 0.0, sum_wx = 0.0;
  int k = 0;
  for (const SeriesNoise& s : model.series) {
    if (s.lag1_pairs == 0) continue;
    const double w = 1.0 / RhoSamplingVariance(model, s);
    sum_w += w;
    sum_w2 += w * w;
    sum_wx += w * s.raw_rho;
    ++k;
  }
  if (k < 2) return 0.0;
  const double mean = sum_wx / sum_w;
  double q = 0.0;
  for (const SeriesNoise& s : model.series) {
    if (s.lag1_pairs > 0) q += std::pow(s.raw_rho - mean, 2) / RhoSamplingVariance(model, s);
  }
  return std::max((q - (k - 1)) / (sum_w - sum_w2 / sum_w), 0.0);
}

double Median(std::vector<double> v) {
  if (v.empty()) return 0.0;
  const auto mid = v.begin() + v.size() / 2;
  std::nth_element(v.begin(), mid, v.end());
  return *mid;
}

// J_s: the rows of `jacobian` of one series, in frame order.
Eigen::MatrixXd SeriesRows(const SeriesNoise& s, const Eigen::MatrixXd& jacobian) {
  Eigen::MatrixXd rows(s.rows.size(), jacobian.cols());
  for (size_t k = 0; k < s.rows.size(); ++k) rows.row(k) = jacobian.row(s.rows[k]);
  return rows;
}

// The variance of a constant offset per series, by the method of moments on the series'
// residual sums (see noise_model.hpp): with u_s = (I - H) 1_s, E[(1_s^T r)^2] =
// u_s^T Omega_AR u_s + tau^2 sum_s' (1_s'^T u_s)^2, summed over the series and solved for
// tau^2 (at least 0). With h_s = A^+ g_s: 1_s'^T u_s = delta_ss' T_s - g_s'^T h_s and
// u_s^T Omega_AR u_s = 1^T Omega_s 1 - 2 (J_s^T Omega_s 1)^T h_s + h_s^T (J^T Omega_AR J) h_s.
double OffsetVariance(const NoiseModel& model, const Eigen::VectorXd& residuals_px,
                      const Eigen::MatrixXd& jacobian, const Eigen::MatrixXd& information_pinv) {
  const size_t n = model.series.size();
  if (n < 2) return 0.0;
  const Eigen::Index p = jacobian.cols();
  std::vector<Eigen::MatrixXd> rows_of(n);
  Eigen::MatrixXd g(p, n);  // g_s = J_s^T 1
  for (size_t k = 0; k < n; ++k) {
    rows_of[k] = SeriesRows(model.series[k], jacobian);
    g.col(k) = rows_of[k].colwise().sum().transpose();
  }
  const Eigen::MatrixXd h = information_pinv * g;
  const Eigen::MatrixXd meat = Ar1Meat(jacobian, model);
  const Eigen::MatrixXd cross = g.transpose() * h;  // g_s'^T h_s at (s', s)
  double observed = 0.0, expected_ar = 0.0, per_offset = 0.0;
  for (size_t k = 0; k < n; ++k) {
    const SeriesNoise& s = model.series[k];
    double sum_r = 0.0;
    for (int a : s.rows) sum_r += residuals_px[a];
    observed += sum_r * sum_r;
    const Eigen::VectorXd omega_one =
        Ar1CovarianceTimes(Eigen::MatrixXd::Ones(s.rows.size(), 1), s.frames, s.variance_px2, s.rho);
    expected_ar += omega_one.sum() - 2.0 * (rows_of[k].transpose() * omega_one).dot(h.col(k)) +
                   h.col(k).dot(meat * h.col(k));
    for (size_t m = 0; m < n; ++m) {
      const double u = (m == k ? static_cast<double>(s.rows.size()) : 0.0) - cross(m, k);
      per_offset += u * u;
    }
  }
  return per_offset > 0 ? std::max((observed - expected_ar) / per_offset, 0.0) : 0.0;
}

}  // namespace

NoiseModel EstimateAr1Noise(const Eigen::VectorXd& residuals_px, const Eigen::MatrixXd& jacobian,
                            const Eigen::MatrixXd& information_pinv,
                            const std::vector<NoiseRow>& rows, const NoiseModelOptions& options) {
  NoiseModel model;
  model.series = GroupSeries(rows);
  // Rows of J A^+: the leverages H_tt = j_t A^+ j_t^T and H_t,t' = j_t A^+ j_t'^T.
  const Eigen::MatrixXd j_pinv = jacobian * information_pinv;
  std::vector<SeriesSums> sums;
  double sum_sq = 0.0, dof = 0.0;
  for (SeriesNoise& s : model.series) {
    sums.push_back(SumsOf(s, residuals_px, jacobian, j_pinv));
    s.leverage = sums.back().leverage;
    s.lag1_pairs = sums.back().pairs;
    sum_sq += sums.back().sum_sq;
    dof += static_cast<double>(s.rows.size()) - s.leverage;
  }
  model.pooled_variance_px2 = sum_sq / std::max(dof, 1.0);
  // Variance: E[sum r^2] = sigma^2 (T - sum H_tt), moderated towards the pooled value
  // (Smyth 2004): (sum r^2 + d0 s0^2) / (T - sum H_tt + d0).
  const double d0 = options.prior_residuals;
  double pooled_lag1 = 0.0, pooled_pairs = 0.0;
  for (size_t k = 0; k < model.series.size(); ++k) {
    SeriesNoise& s = model.series[k];
    const SeriesSums& m = sums[k];
    const double series_dof = std::max(static_cast<double>(s.rows.size()) - s.leverage, 0.0);
    s.variance_px2 = (m.sum_sq + d0 * model.pooled_variance_px2) / (series_dof + d0);
    // Lag 1: E[sum r_t r_t+1] = sigma^2 (rho pairs - sum H_t,t+1) to first order, so
    // gamma_1 = (sum r_t r_t+1 + gamma_0 sum H_t,t+1) / pairs, and rho = gamma_1 / gamma_0,
    // with the series' own gamma_0 (the moderated variance would pull a quiet series'
    // rho towards 0).
    if (m.pairs == 0 || series_dof <= 0.5 || m.sum_sq <= 0) continue;
    const double gamma0 = m.sum_sq / series_dof;
    const double lag1 = m.lag1 + gamma0 * m.pair_leverage;
    s.raw_rho = lag1 / (m.pairs * gamma0);
    pooled_lag1 += lag1;
    pooled_pairs += m.pairs * gamma0;
  }
  model.pooled_rho = pooled_pairs > 0 ? pooled_lag1 / pooled_pairs : 0.0;
  model.pooled_rho = std::clamp(model.pooled_rho, options.rho_min, options.rho_max);
  const double tau2 = BetweenSeriesRhoVariance(model);
  std::vector<double> rhos;
  for (SeriesNoise& s : model.series) {
    // rho_s = rho_pool + tau^2 / (tau^2 + v_s) (raw_s - rho_pool): the series' own
    // estimate in so far as the series differ by more than their sampling noise v_s.
    const double weight = s.lag1_pairs > 0 ? tau2 / (tau2 + RhoSamplingVariance(model, s)) : 0.0;
    s.rho = model.pooled_rho + weight * (s.raw_rho - model.pooled_rho);
    s.rho = std::clamp(s.rho, options.rho_min, options.rho_max);
    if (s.lag1_pairs > 0) rhos.push_back(s.rho);
  }
  model.median_rho = Median(rhos);
  model.max_rho = rhos.empty() ? 0.0 : *std::max_element(rhos.begin(), rhos.end());
  model.offset_variance_px2 = std::max(OffsetVariance(model, residuals_px, jacobian, information_pinv),
                                       options.min_offset_sigma_px * options.min_offset_sigma_px);
  return model;
}

Eigen::MatrixXd Ar1CovarianceTimes(const Eigen::MatrixXd& jacobian_rows,
                                   const std::vector<int>& frames, double variance_px2,
                                   double rho) {
  const Eigen::Index t_count = jacobian_rows.rows();
  Eigen::MatrixXd out = jacobian_rows;
  if (t_count == 0) return out;
  // Forward: F_t = rho^(f_t - f_t-1) (F_t-1 + j_t-1), F_0 = 0.
  Eigen::RowVectorXd carry = Eigen::RowVectorXd::Zero(jacobian_rows.cols());
  for (Eigen::Index t = 1; t < t_count; ++t) {
    carry = std::pow(rho, frames[t] - frames[t - 1]) * (carry + jacobian_rows.row(t - 1));
    out.row(t) += carry;
  }
  // Backward: B_t = rho^(f_t+1 - f_t) (B_t+1 + j_t+1), B_T-1 = 0.
  carry.setZero();
  for (Eigen::Index t = t_count - 2; t >= 0; --t) {
    carry = std::pow(rho, frames[t + 1] - frames[t]) * (carry + jacobian_rows.row(t + 1));
    out.row(t) += carry;
  }
  return variance_px2 * out;
}

Eigen::MatrixXd Ar1Meat(const Eigen::MatrixXd& jacobian, const NoiseModel& model) {
  const Eigen::Index p = jacobian.cols();
  Eigen::MatrixXd meat = Eigen::MatrixXd::Zero(p, p);
  for (const SeriesNoise& s : model.series) {
    const Eigen::MatrixXd rows = SeriesRows(s, jacobian);
    meat += rows.transpose() * Ar1CovarianceTimes(rows, s.frames, s.variance_px2, s.rho);
    if (model.offset_variance_px2 > 0) {
      const Eigen::VectorXd g = rows.colwise().sum().transpose();
      meat += model.offset_variance_px2 * g * g.transpose();
    }
  }
  return 0.5 * (meat + meat.transpose());
}

Eigen::MatrixXd SandwichCovariance(const Eigen::MatrixXd& jacobian,
                                   const Eigen::MatrixXd& information_pinv,
                                   const NoiseModel& model) {
  const Eigen::MatrixXd cov = information_pinv * Ar1Meat(jacobian, model) * information_pinv;
  return 0.5 * (cov + cov.transpose());
}

}  // namespace tumbletrace
