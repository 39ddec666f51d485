#include "completeness.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>

namespace tumbletrace::detect_internal {

bool BlobMarks::InBlob(int x, int y) const {
  const int i = x - x0;
  const int j = y - y0;
  if (i < 0 || j < 0 || i >= width || j >= height) return false;
  return (*marks)[static_cast<std::size_t>(j) * width + i] == blob_mark;
}

namespace {

// Pixels whose centres lie at least 1 px inside the outline: (p - c)^T Q (p - c) <= ((r - 1) / r)^2,
// r the equal-area radius (exact for a circle, close for a round ellipse). Returns the
// share of them in the blob (1 when there are none).
double Fill(const Outline& outline, const BlobMarks& blob) {
  const double r = outline.radius_px;
  const double limit = r > 1.0 ? ((r - 1.0) / r) * ((r - 1.0) / r) : 0.0;
  // The outline's bounding box: half-widths sqrt(Q^-1_xx), sqrt(Q^-1_yy).
  const Eigen::Matrix2d inverse = outline.shape_per_px2.inverse();
  const int hx = static_cast<int>(std::ceil(std::sqrt(inverse(0, 0))));
  const int hy = static_cast<int>(std::ceil(std::sqrt(inverse(1, 1))));
  const int cx = static_cast<int>(std::lround(outline.center_px.x()));
  const int cy = static_cast<int>(std::lround(outline.center_px.y()));
  int inside = 0, in_blob = 0;
  for (int y = cy - hy; y <= cy + hy; ++y) {
    for (int x = cx - hx; x <= cx + hx; ++x) {
      const Eigen::Vector2d d = Eigen::Vector2d(x, y) - outline.center_px;
      if (d.dot(outline.shape_per_px2 * d) > limit) continue;
      ++inside;
      in_blob += blob.InBlob(x, y) ? 1 : 0;
    }
  }
  return inside > 0 ? static_cast<double>(in_blob) / inside : 1.0;
}

}  // namespace

// Share of the blob's pixels p whose mirror image 2c - p (nearest pixel) is in the blob.
double Symmetry(const Eigen::Vector2d& center_px, const BlobMarks& blob) {
  int pixels = 0, mirrored = 0;
  for (int j = 0; j < blob.height; ++j) {
    for (int i = 0; i < blob.width; ++i) {
      const int x = blob.x0 + i;
      const int y = blob.y0 + j;
      if (!blob.InBlob(x, y)) continue;
      ++pixels;
      const int mx = static_cast<int>(std::lround(2.0 * center_px.x() - x));
      const int my = static_cast<int>(std::lround(2.0 * center_px.y() - y));
      mirrored += blob.InBlob(mx, my) ? 1 : 0;
    }
  }
  return pixels > 0 ? static_cast<double>(mirrored) / pixels : 0.0;
}

CompletenessMeasures MeasureCompleteness(const Outline& outline, const BlobMarks& blob) {
  CompletenessMeasures m;
  m.coverage = outline.coverage;
  m.fill = Fill(outline, blob);
  m.symmetry = Symmetry(outline.center_px, blob);
  m.score = std::min({m.coverage, m.fill, m.symmetry});
  return m;
}

double CenterSigmaPx(const Outline& outline, double score, double incomplete_bias_of_radius) {
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(outline.center_covariance_px2);
  const double fit_variance = std::max(0.0, eigen.eigenvalues()(1));
  const double bias = incomplete_bias_of_radius * std::max(0.0, 1.0 - score) * outline.radius_px;
  return std::sqrt(fit_variance + bias * bias);
}

}  // namespace tumbletrace::detect_internal
