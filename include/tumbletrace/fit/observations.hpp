// Identified marker sightings grouped by frame: the fit's input.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "tumbletrace/model/tracks.hpp"

namespace tumbletrace {

struct MarkerSighting {
  int marker_id = 0;
  Eigen::Vector2d pixel;  // distorted image, px
};

struct FrameSightings {
  int camera = 0;         // index into the fit's camera list
  int frame = 0;          // frame number in that camera's clip
  double time_s = 0.0;    // frame / capture_fps of that camera (its own clock)
  std::vector<MarkerSighting> sightings;
};

// Groups identified track points by camera and frame (ascending); unidentified points and
// points of quality 0 (a marker seen in part, kept in its track for continuity) are skipped. The time of frame i of camera k is i / capture_fps[k] (docs/files.md),
// not the file's time_s. Throws InputError for a point of a camera not in the list.
std::vector<FrameSightings> GroupByFrame(const std::vector<TrackPoint>& points,
                                         const std::vector<double>& capture_fps_per_camera);
// One camera.
std::vector<FrameSightings> GroupByFrame(const std::vector<TrackPoint>& points,
                                         double capture_fps);

}  // namespace tumbletrace
