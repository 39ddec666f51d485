#include "edge_points.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace tumbletrace::detect_internal {
namespace {

// Bilinear interpolation of a CV_32F image at (x, y), both inside [0, cols - 1] x [0, rows - 1].
double Bilinear(const cv::Mat& image, double x, double y) {
  const int i = std::min(static_cast<int>(x), image.cols - 2);
  const int j = std::min(static_cast<int>(y), image.rows - 2);
  const double fx = x - i;
  const double fy = y - j;
  const float* top = image.ptr<float>(j) + i;
  const float* bottom = image.ptr<float>(j + 1) + i;
  return (1.0 - fy) * ((1.0 - fx) * top[0] + fx * top[1]) +
         fy * ((1.0 - fx) * bottom[0] + fx * bottom[1]);
}

}  // namespace

// Sobel: gx = ([1 2 1]^T [-1 0 1]) * R / 8, gy its transpose; a derivative per pixel of a
// linear ramp (common practice).
void SobelGradient(const cv::Mat& residue, const cv::Rect& box, cv::Mat* gx, cv::Mat* gy) {
  const auto at = [&](int y, int x) {
    return residue.at<float>(std::clamp(y, 0, residue.rows - 1), std::clamp(x, 0, residue.cols - 1));
  };
  for (int j = 0; j < box.height; ++j) {
    const int y = box.y + j;
    float* out_x = gx->ptr<float>(j);
    float* out_y = gy->ptr<float>(j);
    for (int i = 0; i < box.width; ++i) {
      const int x = box.x + i;
      const float a = at(y - 1, x - 1), b = at(y - 1, x), c = at(y - 1, x + 1);
      const float d = at(y, x - 1), f = at(y, x + 1);
      const float g = at(y + 1, x - 1), h = at(y + 1, x), k = at(y + 1, x + 1);
      out_x[i] = 0.125f * ((c + 2.0f * f + k) - (a + 2.0f * d + g));
      out_y[i] = 0.125f * ((g + 2.0f * h + k) - (a + 2.0f * b + c));
    }
  }
}

void FindEdgePoints(const cv::Mat& gx, const cv::Mat& gy, const cv::Rect& box,
                    const Eigen::Vector2d& center_px, double radius_px,
                    const EdgeSearchOptions& options, std::vector<EdgePoint>* out) {
  out->clear();
  const double t0 = options.inner_of_radius * radius_px;
  const double t1 = options.outer_of_radius * radius_px + options.outer_margin_px;
  const int samples = static_cast<int>((t1 - t0) / options.step_px) + 1;
  std::vector<double> fall(samples);
  const Eigen::Vector2d c = center_px - Eigen::Vector2d(box.x, box.y);
  for (int ray = 0; ray < options.rays; ++ray) {
    const double azimuth = 2.0 * std::numbers::pi * ray / options.rays;
    const Eigen::Vector2d u(std::cos(azimuth), std::sin(azimuth));
    // The samples inside the gradient's box; the ray stops at its edge.
    int count = 0;
    double largest = 0.0;
    for (; count < samples; ++count) {
      const Eigen::Vector2d p = c + (t0 + count * options.step_px) * u;
      if (!(p.x() >= 0.0 && p.y() >= 0.0 && p.x() <= box.width - 1 && p.y() <= box.height - 1)) {
        break;
      }
      fall[count] = -(Bilinear(gx, p.x(), p.y()) * u.x() + Bilinear(gy, p.x(), p.y()) * u.y());
      largest = std::max(largest, fall[count]);
    }
    const double floor = std::max(options.min_share_of_ray_peak * largest, options.min_fall);
    if (!(largest > 0.0)) continue;
    for (int k = count - 2; k >= 1; --k) {  // the outermost local maximum of the fall
      if (fall[k] < floor || fall[k] < fall[k - 1] || fall[k] < fall[k + 1]) continue;
      // The outer half-fall point: where the fall, going outward past the peak, first
      // drops to half the peak (linear interpolation between samples).
      const double half = 0.5 * fall[k];
      int m = k + 1;
      while (m < count && fall[m] > half) ++m;
      if (m >= count) break;  // the ray ends on the edge's flank
      const double t = t0 + (m - 1 + (fall[m - 1] - half) / (fall[m - 1] - fall[m])) * options.step_px;
      EdgePoint point;
      point.at_px = center_px + t * u;
      point.fall_per_px = fall[k];
      point.ray = ray;
      out->push_back(point);
      break;
    }
  }
}

}  // namespace tumbletrace::detect_internal
