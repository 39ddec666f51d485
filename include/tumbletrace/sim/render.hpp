// Synthetic frames: anti-aliased bright marker dots on a darker body silhouette and a
// background, averaged over the exposure (motion blur), with sensor noise.
//
// The renderer knows nothing of bodies or cameras: the simulator projects the scene and
// hands over, for each instant sampled inside the exposure, the silhouette polygons and
// the marker dots in pixels. Pixel coordinates: origin at the centre of the top-left pixel.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <opencv2/core.hpp>
#include <vector>

namespace tumbletrace {

struct RenderedDot {
  Eigen::Vector2d center_px;   // projected centre of the dot
  Eigen::Matrix2d shape_px2;   // the dot's image ellipse: points p with
                               // (p - c)^T shape_px2^-1 (p - c) <= 1 (a disc of radius r:
                               // r^2 I); the projection of a flat, tilted dot is an ellipse
  double intensity = 1.0;      // 0..1 of the dot level above the body level
};

// One instant inside the exposure.
struct SceneInstant {
  std::vector<std::vector<Eigen::Vector2d>> silhouette_polygons_px;  // filled, body level
  std::vector<RenderedDot> dots;                                      // drawn over them
};

struct RenderSettings {
  int width_px = 1024;
  int height_px = 768;
  double background_level = 40.0;   // grey levels of 8-bit output, 0..255
  double body_level = 70.0;
  double dot_level = 230.0;
  int supersampling = 4;            // sub-pixel samples per axis for anti-aliasing
  double noise_sigma_levels = 2.0;  // Gaussian sensor noise, grey levels (0: none)
  double background_gradient = 10.0;  // a gentle left-to-right illumination ramp, levels
  std::uint64_t noise_seed = 1;     // the frame's own seed: same seed, same frame
};

// Renders one 8-bit single-channel frame as the average of the instants (equal weights).
// An empty list of instants gives the background only.
cv::Mat RenderFrame(const std::vector<SceneInstant>& exposure, const RenderSettings& settings);

}  // namespace tumbletrace
