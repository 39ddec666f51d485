// overlay.mp4: a camera's clip with the fit drawn on it — detected markers (green circles),
// the fit's predicted marker pixels (red crosses), the fitted CM (a blue disc) and its path
// (a yellow line) — and the frames outside the free-flight window dimmed and labelled.
// Colours are pure BGR channels so that a test (or a reader) can find each mark.
#pragma once

#include <filesystem>
#include <vector>

#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/model/tracks.hpp"

namespace tumbletrace {

struct OverlayOptions {
  double playback_fps = 30.0;  // the rate written in the file (slow motion)
  int marker_radius_px = 7;    // circle round a detection
  int cross_half_px = 5;       // half-length of a prediction's cross arms
  int cm_radius_px = 4;        // the CM's disc
};

// What one camera's overlay draws.
struct OverlayInput {
  std::filesystem::path clip;           // the camera's clip (video or image folder)
  Camera camera;
  int camera_index = 0;                 // in the fit's camera list (its clock offset)
  double capture_fps = 0.0;             // frame i at i / capture_fps + offset
  const FlightParameters* parameters = nullptr;
  std::vector<Marker> markers;          // the body's
  std::vector<TrackPoint> detections;   // this camera's, identified or not
  int first_frame = 0;                  // the free-flight window (inclusive)
  int last_frame = 0;
};

// The pixel of the fitted CM in frame `frame` (false when behind the camera).
bool CmPixel(const OverlayInput& input, int frame, Eigen::Vector2d* pixel);

// Writes `path` (.mp4, H.264, colour) frame by frame from the clip, atomically (a partial
// file is renamed when complete). Throws InputError naming the clip or the output.
void WriteOverlayVideo(const OverlayInput& input, const std::filesystem::path& path,
                       const OverlayOptions& options = OverlayOptions{});

}  // namespace tumbletrace
