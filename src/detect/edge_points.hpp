// Sub-pixel points of a blob's outline, found along rays from a provisional centre.
//
// Along each of `rays` rays at azimuths 2 pi k / rays from the provisional centre c, the
// residue's fall per pixel F(t) = -grad R(c + t u) . u is sampled every `step_px` over
// t in [inner_of_radius r, outer_of_radius r + outer_margin_px] (r: the provisional radius),
// the gradient taken from the 3 x 3 Sobel operator (divided by 8: a derivative per pixel)
// and interpolated bilinearly. On each ray the outline's fall is the outermost local
// maximum of F at least `min_share_of_ray_peak` of the ray's largest and at least `min_fall`
// (a specular highlight or the terminator lie inside the blob); the edge point is where F,
// going outward from it, first drops to half of it (linear interpolation between samples).
//
// Why the outer half-fall point and not the steepest point. For a step of height h blurred
// by a Gaussian of spread s, F = h G_s(t - t_e): its peak is at the step and its outer
// half-fall point s sqrt(2 ln 2) beyond it, whatever h; the constant offset changes the
// fitted radius and not the centre. A sphere's shading adds inside the limb a ramp
// ~ sqrt(distance from the limb) (the normal's z = sqrt(1 - rho^2)), which pulls the steepest
// point inwards by tenths of a pixel, more where the step is low; the outer flank is
// dominated by the outermost step. Measured on rendered spheres of radius 3.5 and 6 px lit
// head-on, noise-free (support/shaded_marker_patch.hpp): steepest point, centre error
// 0.05-0.07 px and outline rms 0.14 px (bilinear interpolation of the gradient quantises
// the peak); outer half-fall point, 0.001 px and 0.03 px.
#pragma once

#include <Eigen/Core>
#include <opencv2/core.hpp>
#include <vector>

namespace tumbletrace::detect_internal {

struct EdgePoint {
  Eigen::Vector2d at_px = Eigen::Vector2d::Zero();  // in the residue's pixel coordinates
  double fall_per_px = 0.0;   // the residue's fall per pixel across the outline there
  int ray = 0;                // 0..rays-1, at azimuth 2 pi ray / rays
};

struct EdgeSearchOptions {
  int rays = 64;                       // rays around the provisional centre
  double step_px = 0.25;               // sampling step along a ray
  double inner_of_radius = 0.4;        // search from this share of the provisional radius
  double outer_of_radius = 1.6;        // to this share of it,
  double outer_margin_px = 2.0;        // plus this
  double min_share_of_ray_peak = 0.3;  // a local fall counts from this share of the ray's largest
  double min_fall = 0.0;               // and from this fall per pixel (grey levels)
};

// The gradient of the residue (CV_32F) over `box` into `gx`, `gy` (CV_32F, the box's size),
// by the Sobel operator divided by 8; pixels past the residue's border repeat its edge.
void SobelGradient(const cv::Mat& residue, const cv::Rect& box, cv::Mat* gx, cv::Mat* gy);

// The edge points of one blob, at most one per ray, appended to `out` (cleared first).
// `gx`, `gy`: the residue's gradient over `box` (SobelGradient); `center_px` and the
// coordinates of the points are in the residue's pixel coordinates.
void FindEdgePoints(const cv::Mat& gx, const cv::Mat& gy, const cv::Rect& box,
                    const Eigen::Vector2d& center_px, double radius_px,
                    const EdgeSearchOptions& options, std::vector<EdgePoint>* out);

}  // namespace tumbletrace::detect_internal
