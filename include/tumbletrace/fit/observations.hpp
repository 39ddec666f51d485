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
  int frame = 0;
  double time_s = 0.0;
  std::vector<MarkerSighting> sightings;
};

// Groups identified track points by frame (ascending); unidentified points are skipped.
// The time of frame i is i / capture_fps (../shared/CONTRACT.md), not the file's time_s.
std::vector<FrameSightings> GroupByFrame(const std::vector<TrackPoint>& points,
                                         double capture_fps);

}  // namespace tumbletrace
