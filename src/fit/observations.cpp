#include "tumbletrace/fit/observations.hpp"

#include <map>

namespace tumbletrace {

std::vector<FrameSightings> GroupByFrame(const std::vector<TrackPoint>& points,
                                         double capture_fps) {
  std::map<int, FrameSightings> by_frame;
  for (const TrackPoint& p : points) {
    if (!p.marker) continue;
    FrameSightings& f = by_frame[p.frame];
    f.frame = p.frame;
    f.time_s = p.frame / capture_fps;
    f.sightings.push_back({*p.marker, {p.x_px, p.y_px}});
  }
  std::vector<FrameSightings> frames;
  frames.reserve(by_frame.size());
  for (auto& [frame, sightings] : by_frame) frames.push_back(std::move(sightings));
  return frames;
}

}  // namespace tumbletrace
