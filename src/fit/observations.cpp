#include "tumbletrace/fit/observations.hpp"

#include <fmt/format.h>

#include <map>
#include <utility>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {

std::vector<FrameSightings> GroupByFrame(const std::vector<TrackPoint>& points,
                                         const std::vector<double>& capture_fps_per_camera) {
  std::map<std::pair<int, int>, FrameSightings> by_frame;
  for (const TrackPoint& p : points) {
    if (!p.marker) continue;
    if (p.quality == 0.0) continue;  // kept for its track's continuity, not for the fit
    if (p.camera < 0 || p.camera >= static_cast<int>(capture_fps_per_camera.size())) {
      throw InputError(fmt::format("tracks: a point of frame {} belongs to camera {}, but the "
                                   "session names {} camera(s)",
                                   p.frame, p.camera, capture_fps_per_camera.size()));
    }
    FrameSightings& f = by_frame[{p.camera, p.frame}];
    f.camera = p.camera;
    f.frame = p.frame;
    f.time_s = p.frame / capture_fps_per_camera[p.camera];
    f.sightings.push_back({*p.marker, {p.x_px, p.y_px}});
  }
  std::vector<FrameSightings> frames;
  frames.reserve(by_frame.size());
  for (auto& [key, sightings] : by_frame) frames.push_back(std::move(sightings));
  return frames;
}

std::vector<FrameSightings> GroupByFrame(const std::vector<TrackPoint>& points,
                                         double capture_fps) {
  return GroupByFrame(points, std::vector<double>{capture_fps});
}

}  // namespace tumbletrace
