// The camera ray of any point of a window of pixels: where the lens sends it on the
// normalised image plane (x, y) = (X/Z, Y/Z), undistorted through the Brown-Conrady model of
// model/camera.hpp.
//
// The window's pixel corners are undistorted once (Newton's method on the forward model,
// each corner starting from its neighbour's answer); a point inside a pixel is then the
// bilinear interpolation of the pixel's four corners. Over one pixel the lens map is so
// nearly affine that this departs from the exact inverse by far less than 1e-4 px (the
// map's second derivative times (1 px)^2 / 8).
#pragma once

#include <Eigen/Core>
#include <vector>

#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

class LensRays {
 public:
  // The window of pixels [x0, x1) x [y0, y1) (pixel i spans [i - 0.5, i + 0.5); the window
  // may reach outside the image). Throws std::invalid_argument for an empty window.
  LensRays(const CameraIntrinsics& intrinsics, int x0_px, int y0_px, int x1_px, int y1_px);

  // The normalised image point of the pixel point (x_px, y_px), which must lie in the
  // window (within [x0 - 0.5, x1 - 0.5] x [y0 - 0.5, y1 - 0.5]; clamped to it otherwise).
  Eigen::Vector2d Normalised(double x_px, double y_px) const;

  // The undistorted corner (i, j): the pixel point (x0 + i - 0.5, y0 + j - 0.5),
  // 0 <= i <= x1 - x0, 0 <= j <= y1 - y0.
  const Eigen::Vector2d& Corner(int i, int j) const {
    return corners_[static_cast<std::size_t>(j) * (width_ + 1) + i];
  }

  int x0_px() const { return x0_; }
  int y0_px() const { return y0_; }
  int width_px() const { return width_; }
  int height_px() const { return height_; }

 private:
  int x0_ = 0;
  int y0_ = 0;
  int width_ = 0;
  int height_ = 0;
  std::vector<Eigen::Vector2d> corners_;  // (width + 1) x (height + 1), row-major
};

// The normalised image point of a pixel by Newton's method on the forward Brown-Conrady
// model, starting from `start` (a neighbour's answer, or the pinhole point).
Eigen::Vector2d UndistortFrom(const CameraIntrinsics& intrinsics, const Eigen::Vector2d& pixel,
                              const Eigen::Vector2d& start);

}  // namespace tumbletrace
