// Camera rays of a window of pixels (include/tumbletrace/sim/lens_rays.hpp).
#include "tumbletrace/sim/lens_rays.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

namespace tumbletrace {

// Forward model and its Jacobian (model/camera.hpp; OpenCV calib3d documentation):
//   x_d = x (1 + k1 r^2 + k2 r^4 + k3 r^6) + 2 p1 x y + p2 (r^2 + 2 x^2)
//   y_d = y (1 + k1 r^2 + k2 r^4 + k3 r^6) + p1 (r^2 + 2 y^2) + 2 p2 x y
// Newton: (x, y) += J^-1 ((x_d, y_d)_target - (x_d, y_d)(x, y)) until the step is below
// 1e-15 (from a neighbour's answer this takes two or three steps).
Eigen::Vector2d UndistortFrom(const CameraIntrinsics& k, const Eigen::Vector2d& pixel,
                              const Eigen::Vector2d& start) {
  const Eigen::Vector2d target((pixel.x() - k.cx_px) / k.fx_px, (pixel.y() - k.cy_px) / k.fy_px);
  const double k1 = k.distortion[0], k2 = k.distortion[1], p1 = k.distortion[2],
               p2 = k.distortion[3], k3 = k.distortion[4];
  Eigen::Vector2d xy = start;
  constexpr int kMaxIterations = 30;
  for (int iteration = 0; iteration < kMaxIterations; ++iteration) {
    const double x = xy.x(), y = xy.y();
    const double r2 = x * x + y * y;
    const double radial = 1.0 + r2 * (k1 + r2 * (k2 + r2 * k3));
    const double radial_d = k1 + r2 * (2.0 * k2 + 3.0 * k3 * r2);  // d radial / d r^2
    const double x_d = x * radial + 2.0 * p1 * x * y + p2 * (r2 + 2.0 * x * x);
    const double y_d = y * radial + p1 * (r2 + 2.0 * y * y) + 2.0 * p2 * x * y;
    const double j00 = radial + 2.0 * x * x * radial_d + 2.0 * p1 * y + 6.0 * p2 * x;
    const double j01 = 2.0 * x * y * radial_d + 2.0 * p1 * x + 2.0 * p2 * y;
    const double j11 = radial + 2.0 * y * y * radial_d + 6.0 * p1 * y + 2.0 * p2 * x;
    const double det = j00 * j11 - j01 * j01;
    if (!(std::abs(det) > 0.0)) break;
    const double ex = target.x() - x_d, ey = target.y() - y_d;
    const Eigen::Vector2d step((j11 * ex - j01 * ey) / det, (j00 * ey - j01 * ex) / det);
    if (!step.allFinite()) break;
    xy += step;
    if (step.lpNorm<Eigen::Infinity>() < 1e-15) break;
  }
  return xy;
}

LensRays::LensRays(const CameraIntrinsics& intrinsics, int x0_px, int y0_px, int x1_px, int y1_px)
    : x0_(x0_px), y0_(y0_px), width_(x1_px - x0_px), height_(y1_px - y0_px) {
  if (width_ <= 0 || height_ <= 0) {
    throw std::invalid_argument("LensRays: empty window " + std::to_string(width_) + " x " +
                                std::to_string(height_));
  }
  corners_.resize(static_cast<std::size_t>(width_ + 1) * (height_ + 1));
  const CameraIntrinsics& k = intrinsics;
  for (int j = 0; j <= height_; ++j) {
    const double y_px = y0_ + j - 0.5;
    for (int i = 0; i <= width_; ++i) {
      const Eigen::Vector2d pixel(x0_ + i - 0.5, y_px);
      const Eigen::Vector2d start =
          i > 0   ? Corner(i - 1, j)
          : j > 0 ? Corner(0, j - 1)
                  : Eigen::Vector2d((pixel.x() - k.cx_px) / k.fx_px, (pixel.y() - k.cy_px) / k.fy_px);
      corners_[static_cast<std::size_t>(j) * (width_ + 1) + i] = UndistortFrom(k, pixel, start);
    }
  }
}

Eigen::Vector2d LensRays::Normalised(double x_px, double y_px) const {
  // Cell (i, j) spans the pixel x0 + i; u, v in [0, 1] across it.
  const double gx = std::clamp(x_px - (x0_ - 0.5), 0.0, static_cast<double>(width_));
  const double gy = std::clamp(y_px - (y0_ - 0.5), 0.0, static_cast<double>(height_));
  const int i = std::min(static_cast<int>(gx), width_ - 1);
  const int j = std::min(static_cast<int>(gy), height_ - 1);
  const double u = gx - i, v = gy - j;
  // Bilinear interpolation of the cell's corners.
  return (1.0 - v) * ((1.0 - u) * Corner(i, j) + u * Corner(i + 1, j)) +
         v * ((1.0 - u) * Corner(i, j + 1) + u * Corner(i + 1, j + 1));
}

}  // namespace tumbletrace
