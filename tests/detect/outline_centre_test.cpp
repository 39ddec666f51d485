// The detector's centre of shaded spherical markers, whole and partly hidden, on patches
// rendered exactly (support/shaded_marker_patch.hpp): the bias against the light's direction
// and the visible share, the outline's centre beside the old centroid's.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <numbers>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "support/shaded_marker_patch.hpp"
#include "tumbletrace/detect/marker_detector.hpp"

namespace tumbletrace {
namespace {

using testing::OccluderEdge;
using testing::RenderShadedMarker;
using testing::ShadedMarkerOptions;

// The background disc must be wider than the largest marker (radius 8 px).
DetectorOptions Options(CentreMethod centre) {
  DetectorOptions options;
  options.background_radius_px = 12;
  options.centre = centre;
  return options;
}

// The one detection of a patch, or none.
std::optional<Detection> DetectOne(const cv::Mat& patch, CentreMethod centre) {
  MarkerDetector detector(Options(centre));
  const std::vector<Detection> found = detector.Detect(patch);
  if (found.size() != 1) return std::nullopt;
  return found[0];
}

// Centre errors of one kind of render over seeded draws of size, position, light azimuth
// and ambient share, for the outline's centre and the centroid (CentreMethod::kCentroid).
struct BiasStats {
  int renders = 0;
  int kept = 0;                      // outline-centred detections kept
  double sum_squared_px2 = 0.0;      // of the kept centres' errors
  double sum_squared_centroid_px2 = 0.0;
  int centroids = 0;
  int covered = 0;                   // kept with error <= 3 sigma_px
  double worst_px = 0.0;
  double rms_px() const { return kept ? std::sqrt(sum_squared_px2 / kept) : 0.0; }
  double centroid_rms_px() const {
    return centroids ? std::sqrt(sum_squared_centroid_px2 / centroids) : 0.0;
  }
  double dropped() const { return 1.0 - static_cast<double>(kept) / renders; }
};

void Accumulate(const ShadedMarkerOptions& o, BiasStats* stats) {
  const cv::Mat patch = RenderShadedMarker(o);
  ++stats->renders;
  if (const auto d = DetectOne(patch, CentreMethod::kOutline)) {
    ++stats->kept;
    const double error_px = (d->center_px - o.center_px).norm();
    stats->sum_squared_px2 += error_px * error_px;
    stats->worst_px = std::max(stats->worst_px, error_px);
    stats->covered += error_px <= 3.0 * d->sigma_px ? 1 : 0;
  }
  if (const auto c = DetectOne(patch, CentreMethod::kCentroid)) {
    ++stats->centroids;
    const double error_px = (c->center_px - o.center_px).norm();
    stats->sum_squared_centroid_px2 += error_px * error_px;
  }
}

// `count` renders at the light's elevation and the visible share, seeded by `seed`: radius
// 3-8 px, ambient 0.2-0.3, light azimuth, centre's sub-pixel phase and occluder direction
// uniform; straight and curved occluders alternate.
BiasStats Survey(double elevation_deg, double visible_fraction, int count, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  BiasStats stats;
  for (int k = 0; k < count; ++k) {
    ShadedMarkerOptions o;
    o.radius_px = 3.0 + 5.0 * unit(rng);
    o.center_px = Eigen::Vector2d(24.0 + unit(rng), 24.0 + unit(rng));
    o.light_azimuth_rad = 2.0 * std::numbers::pi * unit(rng);
    o.light_elevation_rad = elevation_deg * std::numbers::pi / 180.0;
    o.ambient = 0.2 + 0.1 * unit(rng);
    o.diffuse = 1.0 - o.ambient;
    o.visible_fraction = visible_fraction;
    o.occluder = k % 2 ? OccluderEdge::kCurved : OccluderEdge::kStraight;
    o.occluder_azimuth_rad = 2.0 * std::numbers::pi * unit(rng);
    o.supersampling = 5;
    o.seed = seed * 1000 + k;
    Accumulate(o, &stats);
  }
  return stats;
}

void Print(double elevation_deg, double fraction, const BiasStats& s) {
  std::printf("light %2.0f deg  visible %.1f  kept %2d/%2d  outline rms %.3f px (worst %.3f, "
              "%d within 3 sigma)  centroid rms %.3f px\n",
              elevation_deg, fraction, s.kept, s.renders, s.rms_px(), s.worst_px, s.covered,
              s.centroid_rms_px());
}

// Whole spheres: every one is kept. Head-on and grazing light, whose outlines have the same
// profile all round (head-on) or a flat inside (grazing), give the centre to 0.05 px rms;
// between them the shading's terminator lies close inside the dark side's limb, merges with
// its low step and pulls that side's outline points in: the bias is left at 0.1-0.2 px,
// still a fifth or less of the centroid's.
TEST(OutlineCentre, WholeShadedSpheresBeatTheCentroid) {
  for (double elevation_deg : {0.0, 30.0, 60.0, 85.0}) {
    const BiasStats s = Survey(elevation_deg, 1.0, 24, 7);
    Print(elevation_deg, 1.0, s);
    EXPECT_EQ(s.kept, s.renders) << elevation_deg;
    if (elevation_deg == 0.0 || elevation_deg == 85.0) {
      EXPECT_LT(s.rms_px(), 0.05) << elevation_deg;
    } else if (elevation_deg == 60.0) {
      EXPECT_LT(s.rms_px(), 0.12) << elevation_deg;  // 0.092 measured (0.216 before the envelope)
    } else {
      EXPECT_LT(s.rms_px(), 0.3 * s.centroid_rms_px()) << elevation_deg;
      EXPECT_LT(s.rms_px(), 0.25) << elevation_deg;
    }
  }
}

// Partly hidden spheres: the table of the detection section (docs/method.md). What the
// detector alone achieves: a cut of a tenth, a fifth or two fifths keeps the outline's
// centre within 0.3 px rms (the centroid moves by up to 2.5 px); at 0.4 the visible part
// often fits a smaller whole circle of its own, which the detector cannot tell from a smaller marker: the
// tracker's running median of each track's radius marks those (tracker_test.cpp).
TEST(OutlineCentre, PartlyHiddenSpheres) {
  for (double elevation_deg : {0.0, 30.0, 60.0, 85.0}) {
    for (double fraction : {0.9, 0.8, 0.6, 0.4}) {
      const BiasStats s = Survey(elevation_deg, fraction, 16, 11);
      Print(elevation_deg, fraction, s);
      if (fraction >= 0.8) {
        EXPECT_GE(s.kept, s.renders - 2);
        // The outer envelope (outline_fit.hpp, step 2b) leaves out the cutting edge's
        // points: 0.07-0.25 px rms measured (0.11-0.47 px with a symmetric trim alone).
        EXPECT_LT(s.worst_px, 0.8);
        EXPECT_LT(s.rms_px(), 0.3);
        EXPECT_LT(s.rms_px(), 0.3 * s.centroid_rms_px());
      }
      if (fraction == 0.6 && elevation_deg <= 60.0) {
        // A cut of two fifths: 0.11-0.29 px rms measured (0.65-1.09 px before the envelope).
        EXPECT_LT(s.rms_px(), 0.4);
      }
    }
  }
}

// A sphere lit from the side whose unlit half stays under the threshold (no ambient light):
// the blob is the lit crescent, whose weighted moments are small and elongated. It is
// centred by its rim arc (the outer envelope), or left out of the fit, never by its centroid,
// which lies about 2.5 px towards the light; seen on the imaging study's clips, where 12-40 %
// of the whole markers took the centroid before.
TEST(OutlineCentre, LitCrescentTakesItsRimNotItsCentroid) {
  std::mt19937_64 rng(5);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  int outlined = 0, kept = 0;
  double sum_squared_px2 = 0.0, centroid_sum_squared_px2 = 0.0;
  constexpr int kCount = 12;
  for (int k = 0; k < kCount; ++k) {
    ShadedMarkerOptions o;
    o.radius_px = 4.0 + unit(rng);
    o.center_px = Eigen::Vector2d(24.0 + unit(rng), 24.0 + unit(rng));
    o.light_azimuth_rad = 2.0 * std::numbers::pi * unit(rng);
    o.light_elevation_rad = 80.0 * std::numbers::pi / 180.0;
    o.ambient = 0.0;
    o.diffuse = 1.0;
    o.supersampling = 5;
    o.seed = 500 + k;
    const cv::Mat patch = RenderShadedMarker(o);
    const auto d = DetectOne(patch, CentreMethod::kOutline);
    const auto c = DetectOne(patch, CentreMethod::kCentroid);
    ASSERT_TRUE(c) << k;
    centroid_sum_squared_px2 += (c->center_px - o.center_px).squaredNorm();
    // Dropped, or kept with quality 0 (for the tracker, left out of the fit): its rim arc
    // too short for a complete enough outline.
    if (!d || d->quality == 0.0) continue;
    ++kept;
    outlined += d->outline_fitted ? 1 : 0;
    sum_squared_px2 += (d->center_px - o.center_px).squaredNorm();
  }
  const double rms_px = std::sqrt(sum_squared_px2 / std::max(1, kept));
  const double centroid_rms_px = std::sqrt(centroid_sum_squared_px2 / kCount);
  std::printf("lit crescents: %d/%d kept, %d outlined, rms %.3f px, centroid rms %.3f px\n",
              kept, kCount, outlined, rms_px, centroid_rms_px);
  EXPECT_GE(kept, kCount / 3);
  EXPECT_EQ(outlined, kept);
  EXPECT_GT(centroid_rms_px, 1.0);
  // Measured: 5 of 12 kept for the fit, 0.47 px rms, against the centroid's 2.5 px; the
  // rest dropped or kept with quality 0.
  EXPECT_LT(rms_px, 0.6);
  EXPECT_LT(rms_px, 0.25 * centroid_rms_px);
}

// The centroid stays as an option and for small blobs: a whole sphere of radius below
// min_outline_radius_px is centred by its centroid alone.
TEST(OutlineCentre, SmallBlobsAndTheCentroidOption) {
  ShadedMarkerOptions o;
  o.radius_px = 2.2;
  o.light_elevation_rad = 0.0;
  const auto small = DetectOne(RenderShadedMarker(o), CentreMethod::kOutline);
  ASSERT_TRUE(small.has_value());
  EXPECT_FALSE(small->outline_fitted);
  EXPECT_EQ(small->completeness, 1.0);
  EXPECT_GT(small->sigma_px, 0.0);
  o.radius_px = 6.0;
  const cv::Mat patch = RenderShadedMarker(o);
  const auto outline = DetectOne(patch, CentreMethod::kOutline);
  const auto centroid = DetectOne(patch, CentreMethod::kCentroid);
  ASSERT_TRUE(outline && centroid);
  EXPECT_TRUE(outline->outline_fitted);
  EXPECT_FALSE(centroid->outline_fitted);
  EXPECT_NEAR(outline->radius_px, 6.0, 1.5);  // the outer half-fall lies beyond the limb
  EXPECT_GT(outline->completeness, 0.9);
}

}  // namespace
}  // namespace tumbletrace
