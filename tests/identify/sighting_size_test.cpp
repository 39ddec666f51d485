// Sightings of the wrong size for their marker in the frame: a sliver of a hidden marker
// and a merged blob are set to quality 0; sightings are judged only with enough other
// outlines in the frame; markers of different diameters are compared by their ratio.
#include "tumbletrace/identify/sighting_size.hpp"

#include <gtest/gtest.h>

namespace tumbletrace {
namespace {

Body FourMarkers(double diameter_4_m) {
  Body body;
  for (int id = 1; id <= 4; ++id) {
    Marker m;
    m.id = id;
    m.at_body_m = Eigen::Vector3d(0.05 * id, 0, 0);
    m.diameter_m = id == 4 ? diameter_4_m : 0.012;
    body.markers.push_back(m);
  }
  return body;
}

TrackPoint Point(int frame, int marker, double radius_px, bool outline = true) {
  TrackPoint p;
  p.frame = frame;
  p.marker = marker;
  p.radius_px = radius_px;
  p.outline_fitted = outline;
  p.quality = 0.8;
  return p;
}

TEST(SightingSize, SliversAndMergedBlobsAreLeftOut) {
  const Body body = FourMarkers(0.012);
  std::vector<TrackPoint> points = {
      Point(0, 1, 4.5), Point(0, 2, 4.4), Point(0, 3, 4.6), Point(0, 4, 1.6, false),  // a sliver
      Point(1, 1, 4.5), Point(1, 2, 4.4), Point(1, 3, 4.6), Point(1, 4, 6.8),         // merged
      Point(2, 1, 4.5), Point(2, 2, 4.4), Point(2, 3, 4.6), Point(2, 4, 4.2),         // whole, far
  };
  const SightingSizeReport report = MarkOffSizeSightings(&points, body);
  EXPECT_EQ(report.marked, 2);
  EXPECT_EQ(report.judged, 12);
  EXPECT_EQ(points[3].quality, 0.0);
  EXPECT_EQ(points[7].quality, 0.0);
  for (size_t k : {0u, 1u, 2u, 4u, 5u, 6u, 8u, 9u, 10u, 11u}) EXPECT_GT(points[k].quality, 0.0) << k;
}

TEST(SightingSize, MarkersOfAnotherDiameterAreScaled) {
  // Marker 4 is twice as large: 9 px is its whole image, 4.5 px half of it.
  const Body body = FourMarkers(0.024);
  std::vector<TrackPoint> points = {Point(0, 1, 4.5), Point(0, 2, 4.4), Point(0, 3, 4.6), Point(0, 4, 9.0),
                                    Point(1, 1, 4.5), Point(1, 2, 4.4), Point(1, 3, 4.6), Point(1, 4, 4.5)};
  MarkOffSizeSightings(&points, body);
  EXPECT_GT(points[3].quality, 0.0);
  EXPECT_EQ(points[7].quality, 0.0);
  // ... and marker 4's whole image does not make the others look small.
  EXPECT_GT(points[0].quality, 0.0);
}

TEST(SightingSize, TooFewOutlinesInTheFrameJudgeNothing) {
  const Body body = FourMarkers(0.012);
  // One other outline only, and one other without an outline (a centroid's area radius).
  std::vector<TrackPoint> points = {Point(0, 1, 4.5), Point(0, 2, 4.4, false), Point(0, 4, 1.5, false)};
  const SightingSizeReport report = MarkOffSizeSightings(&points, body);
  EXPECT_EQ(report.marked, 0);
  EXPECT_EQ(points[2].quality, 0.8);
  // Unidentified points and points without a radius (read from a file) are left alone.
  std::vector<TrackPoint> more = {Point(0, 1, 4.5), Point(0, 2, 4.4), Point(0, 3, 4.6), Point(0, 4, 0.0)};
  more.push_back(Point(0, 1, 1.0));
  more.back().marker.reset();
  EXPECT_EQ(MarkOffSizeSightings(&more, body).marked, 0);
}

}  // namespace
}  // namespace tumbletrace
