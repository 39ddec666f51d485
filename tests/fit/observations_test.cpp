#include "tumbletrace/fit/observations.hpp"

#include <gtest/gtest.h>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

TrackPoint Point(int frame, std::optional<int> marker, double quality, int camera = 0) {
  TrackPoint p;
  p.frame = frame;
  p.marker = marker;
  p.x_px = 10.0 * frame;
  p.y_px = 5.0;
  p.quality = quality;
  p.camera = camera;
  return p;
}

// Unidentified points and points of quality 0 (a marker seen in part, kept in its track for
// continuity) are left out; frames are ordered by camera, then frame; time is frame / fps.
TEST(GroupByFrame, LeavesOutUnidentifiedAndQualityZeroPoints) {
  const std::vector<TrackPoint> points = {Point(3, 1, 0.9), Point(3, 2, 0.0), Point(3, {}, 0.9),
                                          Point(2, 2, 0.01), Point(4, 1, 0.0)};
  const std::vector<FrameSightings> frames = GroupByFrame(points, 100.0);
  ASSERT_EQ(frames.size(), 2u);
  EXPECT_EQ(frames[0].frame, 2);
  EXPECT_DOUBLE_EQ(frames[0].time_s, 0.02);
  ASSERT_EQ(frames[1].sightings.size(), 1u);
  EXPECT_EQ(frames[1].sightings[0].marker_id, 1);
  EXPECT_THROW(GroupByFrame({Point(1, 1, 0.5, 2)}, 100.0), InputError);
}

}  // namespace
}  // namespace tumbletrace
