// A spherical marker beside a lit band of the body (the lit edge of a cylindrical handle or
// of a box) on patches rendered exactly (support/shaded_marker_patch.hpp): above the
// threshold the two make one long blob, which the detector refuses; the band's line-opening
// background (MarkerDetector::SeparateFromBands) frees the marker again.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <cstdio>
#include <numbers>
#include <random>
#include <vector>

#include "support/shaded_marker_patch.hpp"
#include "tumbletrace/detect/marker_detector.hpp"

namespace tumbletrace {
namespace {

using testing::RenderShadedMarker;
using testing::ShadedMarkerOptions;

constexpr int kPatchPx = 72;

DetectorOptions Options(bool separate) {
  DetectorOptions options;
  options.background_radius_px = 7;  // 0.7 x the diameter of the largest marker
  options.separate_from_bands = separate;
  return options;
}

// A seeded scene: a marker of radius 3.5-5 px lit from 30-60 deg, touching (or overlapping
// by up to 1 px) a band 3-6 px wide whose axis is 40-80 % as bright as the marker's shade 1,
// in any direction.
ShadedMarkerOptions Scene(std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  ShadedMarkerOptions o;
  o.patch_px = kPatchPx;
  o.radius_px = 3.5 + 1.5 * unit(rng);
  o.center_px = Eigen::Vector2d(36.0 + unit(rng), 36.0 + unit(rng));
  o.light_azimuth_rad = 2.0 * std::numbers::pi * unit(rng);
  o.light_elevation_rad = (30.0 + 30.0 * unit(rng)) * std::numbers::pi / 180.0;
  o.ambient = 0.2 + 0.1 * unit(rng);
  o.diffuse = 1.0 - o.ambient;
  o.band_width_px = 3.0 + 3.0 * unit(rng);
  o.band_levels = (0.4 + 0.4 * unit(rng)) * o.marker_levels;
  o.band_offset_px = o.radius_px + 0.5 * o.band_width_px - unit(rng);
  o.band_azimuth_rad = 2.0 * std::numbers::pi * unit(rng);
  o.supersampling = 5;
  o.seed = seed;
  return o;
}

// The detection nearest to p within 2 px, if any.
const Detection* Near(const std::vector<Detection>& found, const Eigen::Vector2d& p) {
  const Detection* best = nullptr;
  double best_px = 2.0;
  for (const Detection& d : found) {
    const double distance = (d.center_px - p).norm();
    if (distance < best_px) {
      best_px = distance;
      best = &d;
    }
  }
  return best;
}

// 40 seeded scenes: every marker is lost as one long blob with the band without the
// separation; with it, 35 are found (0.46 px rms off, against 0.22 px for the same
// spheres standing free: the shading's terminator and the band's side of the outline, which
// counts as missing) with quality 0, for the tracker and identification only; the band
// gives no detection of its own, with or without a marker beside it.
TEST(BandSeparation, MarkerJoinedToALitBandIsFreedForTheTracker) {
  constexpr int kScenes = 40;
  int lost_whole = 0, freed = 0, others = 0, band_alone = 0;
  double sum_squared_px2 = 0.0, sum_squared_free_px2 = 0.0;
  for (int k = 0; k < kScenes; ++k) {
    const ShadedMarkerOptions o = Scene(500 + k);
    const cv::Mat patch = RenderShadedMarker(o);
    MarkerDetector whole(Options(false));
    MarkerDetector separating(Options(true));
    lost_whole += Near(whole.Detect(patch), o.center_px) == nullptr;
    const std::vector<Detection> found = separating.Detect(patch);
    const Detection* d = Near(found, o.center_px);
    others += static_cast<int>(found.size()) - (d ? 1 : 0);
    ShadedMarkerOptions no_marker = o;
    no_marker.radius_px = 0.01;
    MarkerDetector band_only(Options(true));
    band_alone += static_cast<int>(band_only.Detect(RenderShadedMarker(no_marker)).size());
    if (d == nullptr) continue;
    ++freed;
    EXPECT_EQ(d->quality, 0.0) << k;
    sum_squared_px2 += (d->center_px - o.center_px).squaredNorm();
    ShadedMarkerOptions free_standing = o;
    free_standing.band_levels = 0.0;
    MarkerDetector control(Options(true));
    const std::vector<Detection> standing = control.Detect(RenderShadedMarker(free_standing));
    const Detection* c = Near(standing, o.center_px);
    ASSERT_NE(c, nullptr) << k;
    EXPECT_GT(c->quality, 0.0) << k;
    sum_squared_free_px2 += (c->center_px - o.center_px).squaredNorm();
  }
  const double rms_px = freed ? std::sqrt(sum_squared_px2 / freed) : 0.0;
  const double free_rms_px = freed ? std::sqrt(sum_squared_free_px2 / freed) : 0.0;
  std::printf("%d scenes: lost as one blob %d; separated %d (%.3f px rms; the same spheres standing free %.3f px); "
              "other detections %d, of the band alone %d\n",
              kScenes, lost_whole, freed, rms_px, free_rms_px, others, band_alone);
  EXPECT_EQ(lost_whole, kScenes);
  EXPECT_GE(freed, 32);
  EXPECT_LT(rms_px, 0.5);
  EXPECT_EQ(others, 0);
  EXPECT_EQ(band_alone, 0);
}

}  // namespace
}  // namespace tumbletrace
