#include "outline_fit.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <numbers>

namespace tumbletrace::detect_internal {
namespace {

constexpr int kMinPoints = 6;

// The circle through three points, from x^2 + y^2 + D x + E y + F = 0 (the algebraic circle,
// I. Kasa, IEEE Trans. Instrumentation and Measurement 25(1), 1976): centre (-D/2, -E/2),
// radius^2 = (D^2 + E^2) / 4 - F. Empty for (nearly) collinear points.
std::optional<Eigen::Vector3d> CircleThrough(const Eigen::Vector2d& a, const Eigen::Vector2d& b,
                                             const Eigen::Vector2d& c) {
  Eigen::Matrix3d m;
  m << a.x(), a.y(), 1.0, b.x(), b.y(), 1.0, c.x(), c.y(), 1.0;
  const double det = m.determinant();
  const double scale = std::max({(a - b).squaredNorm(), (b - c).squaredNorm(), 1e-12});
  if (std::abs(det) < 1e-6 * scale) return std::nullopt;
  const Eigen::Vector3d rhs(-a.squaredNorm(), -b.squaredNorm(), -c.squaredNorm());
  const Eigen::Vector3d def = m.partialPivLu().solve(rhs);
  const double r2 = 0.25 * (def(0) * def(0) + def(1) * def(1)) - def(2);
  if (!(r2 > 0.0)) return std::nullopt;
  return Eigen::Vector3d(-0.5 * def(0), -0.5 * def(1), std::sqrt(r2));
}

// Circle residual r = |p - c| - R (the geometric distance) and its gradient in (cx, cy, R).
double CircleResidual(const Eigen::Vector3d& circle, const Eigen::Vector2d& p,
                      Eigen::Vector3d* gradient) {
  const Eigen::Vector2d d = p - circle.head<2>();
  const double rho = std::max(d.norm(), 1e-12);
  if (gradient) *gradient << -d.x() / rho, -d.y() / rho, -1.0;
  return rho - circle(2);
}

// Ellipse residual r = s (sqrt(q) - 1), q = d^T Q d, d = p - c, Q = [a b; b c]: the distance
// along the ray from the centre, in units of the scale s (the first circle's radius); the
// geometric distance for a circle of radius s, and close to it for a round ellipse.
//   dr/dc = -s Q d / sqrt(q),  dr/da = s dx^2 / (2 sqrt(q)),  dr/db = s dx dy / sqrt(q),
//   dr/dc_yy = s dy^2 / (2 sqrt(q)).
double EllipseResidual(const Eigen::Matrix<double, 5, 1>& e, double scale_px,
                       const Eigen::Vector2d& p, Eigen::Matrix<double, 5, 1>* gradient) {
  const Eigen::Vector2d d = p - e.head<2>();
  Eigen::Matrix2d q_matrix;
  q_matrix << e(2), e(3), e(3), e(4);
  const Eigen::Vector2d qd = q_matrix * d;
  const double root = std::sqrt(std::max(d.dot(qd), 1e-24));
  if (gradient) {
    *gradient << -scale_px * qd.x() / root, -scale_px * qd.y() / root,
        0.5 * scale_px * d.x() * d.x() / root, scale_px * d.x() * d.y() / root,
        0.5 * scale_px * d.y() * d.y() / root;
  }
  return scale_px * (root - 1.0);
}

// Weighted Gauss-Newton on the inliers: minimises sum w r^2. Returns the normal matrix
// J^T W J at the solution, the weighted squared residual sum, or false on a singular step.
template <int N, typename Residual>
bool GaussNewton(const std::vector<EdgePoint>& points, const std::vector<double>& weights,
                 const std::vector<char>& inlier, const Residual& residual,
                 Eigen::Matrix<double, N, 1>* params, Eigen::Matrix<double, N, N>* normal,
                 double* weighted_sum) {
  using Vector = Eigen::Matrix<double, N, 1>;
  for (int iteration = 0; iteration < 10; ++iteration) {
    Eigen::Matrix<double, N, N> jtj = Eigen::Matrix<double, N, N>::Zero();
    Vector jtr = Vector::Zero();
    double sum = 0.0;
    for (std::size_t k = 0; k < points.size(); ++k) {
      if (!inlier[k]) continue;
      Vector g;
      const double r = residual(*params, points[k].at_px, &g);
      jtj += weights[k] * g * g.transpose();
      jtr += weights[k] * r * g;
      sum += weights[k] * r * r;
    }
    *normal = jtj;
    *weighted_sum = sum;
    const Eigen::LDLT<Eigen::Matrix<double, N, N>> ldlt(jtj);
    if (ldlt.info() != Eigen::Success || !(ldlt.rcond() > 1e-12)) return false;
    const Vector step = -ldlt.solve(jtr);
    if (!step.allFinite()) return false;
    *params += step;
    if (step.template head<2>().norm() < 1e-5) break;  // far below the noise
  }
  return params->allFinite();
}

// Marks as inliers the points within max(trim_sigmas x 1.4826 x median |r| of the current
// inliers, min_trim_px) of the model; returns their number.
template <typename Residual>
int Trim(const std::vector<EdgePoint>& points, const Residual& residual,
         const OutlineFitOptions& options, std::vector<char>* inlier) {
  std::vector<double> absolute;
  std::vector<double> all(points.size());
  for (std::size_t k = 0; k < points.size(); ++k) {
    all[k] = std::abs(residual(points[k].at_px));
    if ((*inlier)[k]) absolute.push_back(all[k]);
  }
  if (absolute.empty()) return 0;
  const auto middle = absolute.begin() + absolute.size() / 2;
  std::nth_element(absolute.begin(), middle, absolute.end());
  // 1.4826 x MAD: the standard deviation of normal residuals (common practice).
  const double limit = std::max(options.trim_sigmas * 1.4826 * *middle, options.min_trim_px);
  int count = 0;
  for (std::size_t k = 0; k < points.size(); ++k) {
    (*inlier)[k] = all[k] < limit;
    count += (*inlier)[k];
  }
  return count;
}

// Step 1: the circle through triples that the most edge strength agrees with.
std::optional<Eigen::Vector3d> ConsensusCircle(const std::vector<EdgePoint>& points,
                                               const std::vector<double>& weights,
                                               const OutlineFitOptions& options) {
  const int n = static_cast<int>(points.size());
  std::optional<Eigen::Vector3d> best;
  double best_support = 0.0;
  for (int i = 0; i < n; ++i) {
    const auto circle = CircleThrough(points[i].at_px, points[(i + n / 3) % n].at_px,
                                      points[(i + 2 * n / 3) % n].at_px);
    if (!circle) continue;
    double support = 0.0;
    for (int k = 0; k < n; ++k) {
      if (std::abs(CircleResidual(*circle, points[k].at_px, nullptr)) < options.consensus_px) {
        support += weights[k];
      }
    }
    if (support > best_support) {
      best_support = support;
      best = circle;
    }
  }
  return best;
}

// The centre's covariance s^2 (J^T W J)^-1 (top-left 2 x 2), s^2 the weighted residual
// variance, inflated by n / n_independent: points on neighbouring rays closer than a pixel
// share pixels and noise, so the independent points are about as many as the pixels of
// inlier outline, coverage x 2 pi r (an approximation of this detector).
template <int N>
Eigen::Matrix2d CenterCovariance(const Eigen::Matrix<double, N, N>& normal, double weighted_sum,
                                 double weight_sum, int inliers, double arc_px) {
  const double variance = weighted_sum / std::max(1e-12, weight_sum) * inliers /
                          std::max(1, inliers - N);
  const double correlation = inliers / std::clamp(arc_px, 1.0, static_cast<double>(inliers));
  const Eigen::Matrix<double, N, N> inverse = normal.inverse();
  return variance * correlation * weight_sum / inliers * inverse.template topLeftCorner<2, 2>();
}

// The inliers' share of the rays, their number, and weighted rms.
void Summarise(const std::vector<EdgePoint>& points, const std::vector<double>& weights,
               const OutlineFitOptions& options, double weighted_sum, Outline* outline) {
  double weight_sum = 0.0;
  outline->inliers = 0;
  for (std::size_t k = 0; k < points.size(); ++k) {
    if (!outline->inlier[k]) continue;
    ++outline->inliers;
    weight_sum += weights[k];
  }
  outline->coverage = static_cast<double>(outline->inliers) / options.rays;
  outline->rms_px = std::sqrt(weighted_sum / std::max(1e-12, weight_sum));
}

// Step 2b: the outer envelope. The outline's points that are not on the marker's rim lie
// inside it, never outside: the terminator of a sphere lit from one side (where the lit
// crescent ends and the unlit side is no brighter than what lies behind it), the edge of
// the body or of a shadow that cuts the marker. A fit that weighs them like rim points
// puts the centre between the two, towards the light or the visible part. Iteratively
// reweighted least squares with an asymmetric weight: 1 for a point outside the model or
// less than `envelope_px` inside it, (envelope_px / depth)^2 deeper inside (Cauchy-like
// down-weighting of one side; a standard IRLS scheme, common practice), so the model
// settles on the outermost consistent arc; points farther outside than the trim limit
// (a merged neighbour, a glint) are left out. Then `inlier` marks the points within
// 2 envelope_px inside and the trim limit outside, and the model is refitted to them with
// their own weights. False when fewer than kMinPoints remain or a step fails.
template <int N, typename Residual>
bool FitOuterEnvelope(const std::vector<EdgePoint>& points, const std::vector<double>& weights,
                      const OutlineFitOptions& options, const Residual& residual,
                      Eigen::Matrix<double, N, 1>* params, Eigen::Matrix<double, N, N>* normal,
                      double* sum, std::vector<char>* inlier) {
  const std::size_t n = points.size();
  const double c = options.envelope_px;
  std::vector<double> r(n), w(n);
  std::vector<char> use(n);
  double outer_limit = 0.0;
  const auto measure = [&]() {
    std::vector<double> rim;
    for (std::size_t k = 0; k < n; ++k) {
      r[k] = residual(*params, points[k].at_px, nullptr);
      if (r[k] >= -c) rim.push_back(std::abs(r[k]));
    }
    if (rim.empty()) return false;
    const auto middle = rim.begin() + rim.size() / 2;
    std::nth_element(rim.begin(), middle, rim.end());
    outer_limit = std::max(options.trim_sigmas * 1.4826 * *middle, options.min_trim_px);
    return true;
  };
  for (int pass = 0; pass < options.envelope_passes; ++pass) {
    if (!measure()) return false;
    int count = 0;
    for (std::size_t k = 0; k < n; ++k) {
      use[k] = r[k] <= outer_limit;
      count += use[k];
      w[k] = weights[k] * (r[k] >= -c ? 1.0 : (c * c) / (r[k] * r[k]));
    }
    if (count < kMinPoints) return false;
    const Eigen::Matrix<double, N, 1> before = *params;
    const auto model = [&](const Eigen::Matrix<double, N, 1>& q, const Eigen::Vector2d& p,
                           Eigen::Matrix<double, N, 1>* g) { return residual(q, p, g); };
    if (!GaussNewton<N>(points, w, use, model, params, normal, sum)) return false;
    if ((params->template head<2>() - before.template head<2>()).norm() < 1e-4) break;
  }
  if (!measure()) return false;
  int count = 0;
  for (std::size_t k = 0; k < n; ++k) {
    (*inlier)[k] = r[k] >= -2.0 * c && r[k] <= outer_limit;
    count += (*inlier)[k];
  }
  if (count < kMinPoints) return false;
  const auto model = [&](const Eigen::Matrix<double, N, 1>& q, const Eigen::Vector2d& p,
                         Eigen::Matrix<double, N, 1>* g) { return residual(q, p, g); };
  return GaussNewton<N>(points, weights, *inlier, model, params, normal, sum);
}

}  // namespace

std::optional<Outline> FitOutline(const std::vector<EdgePoint>& points,
                                  const OutlineFitOptions& options) {
  const int n = static_cast<int>(points.size());
  if (n < kMinPoints) return std::nullopt;
  // Weights: the fall per pixel, relative to the mean.
  double mean_fall = 0.0;
  for (const EdgePoint& p : points) mean_fall += p.fall_per_px / n;
  std::vector<double> weights(n);
  for (int k = 0; k < n; ++k) weights[k] = points[k].fall_per_px / mean_fall;

  const auto first = ConsensusCircle(points, weights, options);
  if (!first) return std::nullopt;
  Eigen::Vector3d circle = *first;
  Outline outline;
  outline.inlier.assign(n, 0);
  for (int k = 0; k < n; ++k) {
    outline.inlier[k] = std::abs(CircleResidual(circle, points[k].at_px, nullptr)) < options.consensus_px;
  }
  const auto circle_residual = [](const Eigen::Vector3d& c, const Eigen::Vector2d& p,
                                  Eigen::Vector3d* g) { return CircleResidual(c, p, g); };
  Eigen::Matrix3d circle_normal;
  double sum = 0.0;
  for (int pass = 0; pass < options.passes; ++pass) {
    if (!GaussNewton<3>(points, weights, outline.inlier, circle_residual, &circle, &circle_normal, &sum)) {
      return std::nullopt;
    }
    const auto distance = [&](const Eigen::Vector2d& p) { return CircleResidual(circle, p, nullptr); };
    if (Trim(points, distance, options, &outline.inlier) < kMinPoints) return std::nullopt;
  }
  if (!GaussNewton<3>(points, weights, outline.inlier, circle_residual, &circle, &circle_normal, &sum)) {
    return std::nullopt;
  }
  if (options.envelope_px > 0.0 &&
      !FitOuterEnvelope<3>(points, weights, options,
                           [](const Eigen::Vector3d& c, const Eigen::Vector2d& p, Eigen::Vector3d* g) {
                             return CircleResidual(c, p, g);
                           },
                           &circle, &circle_normal, &sum, &outline.inlier)) {
    return std::nullopt;
  }
  if (!(circle(2) > 0.0)) return std::nullopt;
  Summarise(points, weights, options, sum, &outline);
  outline.center_px = circle.head<2>();
  outline.shape_per_px2 = Eigen::Matrix2d::Identity() / (circle(2) * circle(2));
  outline.radius_px = circle(2);
  double weight_sum = 0.0;
  for (int k = 0; k < n; ++k) weight_sum += outline.inlier[k] ? weights[k] : 0.0;
  const double arc_px = outline.coverage * 2.0 * std::numbers::pi * circle(2);
  outline.center_covariance_px2 =
      CenterCovariance<3>(circle_normal, sum, weight_sum, outline.inliers, arc_px);
  if (outline.coverage < options.ellipse_min_coverage) return outline;

  // Step 3: the ellipse, started from the circle.
  const double scale_px = circle(2);
  Eigen::Matrix<double, 5, 1> ellipse;
  ellipse << circle(0), circle(1), 1.0 / (scale_px * scale_px), 0.0, 1.0 / (scale_px * scale_px);
  const auto ellipse_residual = [scale_px](const Eigen::Matrix<double, 5, 1>& e,
                                           const Eigen::Vector2d& p,
                                           Eigen::Matrix<double, 5, 1>* g) {
    return EllipseResidual(e, scale_px, p, g);
  };
  std::vector<char> inlier = outline.inlier;
  Eigen::Matrix<double, 5, 5> ellipse_normal;
  for (int pass = 0; pass < 2; ++pass) {
    if (!GaussNewton<5>(points, weights, inlier, ellipse_residual, &ellipse, &ellipse_normal, &sum)) {
      return outline;
    }
    const auto distance = [&](const Eigen::Vector2d& p) {
      return EllipseResidual(ellipse, scale_px, p, nullptr);
    };
    if (Trim(points, distance, options, &inlier) < kMinPoints) return outline;
  }
  if (!GaussNewton<5>(points, weights, inlier, ellipse_residual, &ellipse, &ellipse_normal, &sum)) {
    return outline;
  }
  if (options.envelope_px > 0.0 &&
      !FitOuterEnvelope<5>(points, weights, options, ellipse_residual, &ellipse, &ellipse_normal,
                           &sum, &inlier)) {
    return outline;
  }
  Eigen::Matrix2d shape;
  shape << ellipse(2), ellipse(3), ellipse(3), ellipse(4);
  if (!(shape.determinant() > 0.0 && shape.trace() > 0.0)) return outline;  // not an ellipse
  outline.inlier = inlier;
  Summarise(points, weights, options, sum, &outline);
  outline.center_px = ellipse.head<2>();
  outline.shape_per_px2 = shape;
  outline.radius_px = std::pow(shape.determinant(), -0.25);
  outline.ellipse = true;
  weight_sum = 0.0;
  for (int k = 0; k < n; ++k) weight_sum += outline.inlier[k] ? weights[k] : 0.0;
  outline.center_covariance_px2 = CenterCovariance<5>(
      ellipse_normal, sum, weight_sum, outline.inliers,
      outline.coverage * 2.0 * std::numbers::pi * outline.radius_px);
  return outline;
}

}  // namespace tumbletrace::detect_internal
