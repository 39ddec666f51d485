// One spherical marker rendered exactly into a small patch, for the detector's centre tests:
// a Lambertian sphere with ambient light, diffuse light from a chosen direction and a
// Phong specular highlight, optionally hidden in part behind a dark occluder with a
// straight or curved edge, blurred by a Gaussian lens spread, integrated over each pixel's
// area (fine supersampling), with Gaussian sensor noise, quantised to 8 bits and optionally
// passed through JPEG (the blockwise DCT quantisation of lossy video).
//
// The sphere is seen orthographically: its outline is the circle |p - c| = R and its
// projected centre is c exactly (through a pinhole the outline's centre moves outward by
// about (r / f)^2 / cos^2 a of its distance from the principal point, a the angle off the
// axis; see the detector's header).
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <opencv2/core.hpp>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>
#include <numbers>
#include <random>
#include <vector>

namespace tumbletrace::testing {

enum class OccluderEdge {
  kStraight,  // a half-plane
  kCurved,    // a disc of OccluderOptions::curved_radius_of_marker x R (the body's rim)
};

struct ShadedMarkerOptions {
  Eigen::Vector2d center_px = Eigen::Vector2d(24.0, 24.0);  // the sphere's projected centre
  double radius_px = 5.0;             // the sphere's outline radius
  double light_azimuth_rad = 0.0;     // the light's direction in the image plane (x right, y down)
  double light_elevation_rad = 0.7;   // the light's angle from the viewing axis (0: head-on)
  double ambient = 0.25;              // ambient share of the albedo, 0..1
  double diffuse = 0.75;              // diffuse share
  double specular = 0.6;              // the highlight's peak, in the same units
  double shininess = 40.0;            // Phong exponent of the highlight
  double marker_levels = 170.0;       // grey levels of shade 1 above the background
  double background_levels = 20.0;    // the body's grey level around the marker
  double occluder_levels = 8.0;       // grey level of the occluder (darker than the body)
  double visible_fraction = 1.0;      // share of the marker's outline area left visible
  OccluderEdge occluder = OccluderEdge::kStraight;
  double occluder_azimuth_rad = 0.0;  // direction from the marker's centre towards the occluder
  double curved_radius_of_marker = 3.0;  // the curved occluder's radius, in marker radii
  double band_levels = 0.0;           // a lit band of the body beside the marker (the lit edge
                                      // of a handle), grey levels at its axis above the body;
                                      // 0: none. Its profile across is a half cosine.
  double band_width_px = 4.0;         // the band's full width
  double band_offset_px = 6.0;        // its axis's distance from the marker's centre
  double band_azimuth_rad = 0.0;      // direction from the marker's centre towards the band
  double blur_sigma_px = 0.5;         // the lens's Gaussian spread
  double noise_sigma_levels = 2.0;    // sensor noise
  int jpeg_quality = 0;               // 1..100: JPEG round trip; 0: none
  int patch_px = 48;                  // square patch side
  int supersampling = 8;              // samples per pixel side
  std::uint64_t seed = 1;             // noise seed
};

namespace shaded_marker_detail {

// Lambert's cosine law with ambient light and Phong's highlight (B. T. Phong, "Illumination
// for computer generated pictures", CACM 18(6), 1975): for the unit normal n, the light's
// direction l and the half vector h = (l + v) / |l + v| with v the viewing direction (0, 0, 1),
//   shade = ambient + diffuse max(0, n . l) + specular max(0, n . h)^shininess.
inline double Shade(const ShadedMarkerOptions& o, const Eigen::Vector3d& normal) {
  const Eigen::Vector3d light(std::sin(o.light_elevation_rad) * std::cos(o.light_azimuth_rad),
                              std::sin(o.light_elevation_rad) * std::sin(o.light_azimuth_rad),
                              std::cos(o.light_elevation_rad));
  const Eigen::Vector3d half = (light + Eigen::Vector3d::UnitZ()).normalized();
  return o.ambient + o.diffuse * std::max(0.0, normal.dot(light)) +
         o.specular * std::pow(std::max(0.0, normal.dot(half)), o.shininess);
}

// Whether the point p (px) lies behind the occluder placed at `offset_px` along its azimuth
// (the edge's distance from the marker's centre, negative past it).
inline bool Occluded(const ShadedMarkerOptions& o, const Eigen::Vector2d& p, double offset_px) {
  const Eigen::Vector2d towards(std::cos(o.occluder_azimuth_rad), std::sin(o.occluder_azimuth_rad));
  const Eigen::Vector2d d = p - o.center_px;
  if (o.occluder == OccluderEdge::kStraight) return d.dot(towards) > offset_px;
  const double rc = o.curved_radius_of_marker * o.radius_px;
  const Eigen::Vector2d occluder_centre = (offset_px + rc) * towards;
  return (d - occluder_centre).norm() < rc;
}

// The share of the marker's disc left visible with the occluder at `offset_px`, on a grid of
// 200 x 200 points over the disc's box.
inline double VisibleShare(const ShadedMarkerOptions& o, double offset_px) {
  constexpr int kGrid = 200;
  int inside = 0, visible = 0;
  for (int j = 0; j < kGrid; ++j) {
    for (int i = 0; i < kGrid; ++i) {
      const Eigen::Vector2d d(((i + 0.5) / kGrid * 2.0 - 1.0) * o.radius_px,
                              ((j + 0.5) / kGrid * 2.0 - 1.0) * o.radius_px);
      if (d.norm() >= o.radius_px) continue;
      ++inside;
      visible += Occluded(o, o.center_px + d, offset_px) ? 0 : 1;
    }
  }
  return static_cast<double>(visible) / inside;
}

// The occluder's offset that leaves `visible_fraction` of the disc visible (bisection).
inline double OccluderOffset(const ShadedMarkerOptions& o) {
  double lo = -o.radius_px, hi = o.radius_px;  // all hidden .. all visible
  for (int k = 0; k < 40; ++k) {
    const double mid = 0.5 * (lo + hi);
    (VisibleShare(o, mid) < o.visible_fraction ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

}  // namespace shaded_marker_detail

// The patch, CV_8U, patch_px square. Pixel (i, j) covers [i - 0.5, i + 0.5] x [j - 0.5, j + 0.5].
inline cv::Mat RenderShadedMarker(const ShadedMarkerOptions& o) {
  namespace detail = shaded_marker_detail;
  const int s = o.supersampling;
  const int fine_px = o.patch_px * s;
  const bool occluded = o.visible_fraction < 1.0;
  const double offset_px = occluded ? detail::OccluderOffset(o) : 0.0;
  cv::Mat fine(fine_px, fine_px, CV_32F);
  for (int v = 0; v < fine_px; ++v) {
    for (int u = 0; u < fine_px; ++u) {
      const Eigen::Vector2d p((u + 0.5) / s - 0.5, (v + 0.5) / s - 0.5);
      double level = o.background_levels;
      const Eigen::Vector2d d = (p - o.center_px) / o.radius_px;
      const double rho2 = d.squaredNorm();
      if (o.band_levels > 0.0) {
        const Eigen::Vector2d across(std::cos(o.band_azimuth_rad), std::sin(o.band_azimuth_rad));
        const double u = ((p - o.center_px).dot(across) - o.band_offset_px) / (0.5 * o.band_width_px);
        if (std::abs(u) < 1.0) level += o.band_levels * std::cos(0.25 * std::numbers::pi * 2.0 * u);
      }
      if (rho2 < 1.0) {
        level = o.background_levels;  // the marker hides the band behind it
        const Eigen::Vector3d normal(d.x(), d.y(), std::sqrt(1.0 - rho2));
        level += o.marker_levels * detail::Shade(o, normal);
      }
      if (occluded && detail::Occluded(o, p, offset_px)) level = o.occluder_levels;
      fine.at<float>(v, u) = static_cast<float>(level);
    }
  }
  if (o.blur_sigma_px > 0.0) {
    cv::GaussianBlur(fine, fine, cv::Size(0, 0), o.blur_sigma_px * s, 0.0, cv::BORDER_REPLICATE);
  }
  cv::Mat coarse;
  cv::resize(fine, coarse, cv::Size(o.patch_px, o.patch_px), 0, 0, cv::INTER_AREA);
  std::mt19937_64 rng(o.seed);
  std::normal_distribution<double> noise(0.0, o.noise_sigma_levels);
  cv::Mat patch(o.patch_px, o.patch_px, CV_8U);
  for (int j = 0; j < o.patch_px; ++j) {
    for (int i = 0; i < o.patch_px; ++i) {
      const double level = coarse.at<float>(j, i) + (o.noise_sigma_levels > 0 ? noise(rng) : 0.0);
      patch.at<std::uint8_t>(j, i) = cv::saturate_cast<std::uint8_t>(std::lround(level));
    }
  }
  if (o.jpeg_quality > 0) {
    std::vector<std::uint8_t> bytes;
    cv::imencode(".jpg", patch, bytes, {cv::IMWRITE_JPEG_QUALITY, o.jpeg_quality});
    patch = cv::imdecode(bytes, cv::IMREAD_GRAYSCALE);
  }
  return patch;
}

}  // namespace tumbletrace::testing
