// Frame-to-frame association of detections into tracks.
//
// Each live track predicts its next position from its recent motion (constant
// acceleration over the last few points, constant velocity when short); detections are
// assigned to predictions by a global nearest-neighbour assignment inside a gate. A track
// missing for up to `max_gap_frames` frames is bridged; two tracks competing for one
// detection (dots that merge) or one track with two candidates of similar distance
// (a glint beside a dot) end the affected track(s) rather than join wrongly.
#pragma once

#include <Eigen/Core>
#include <opencv2/core.hpp>
#include <string>
#include <vector>

#include "tumbletrace/detect/marker_detector.hpp"
#include "tumbletrace/model/tracks.hpp"

namespace tumbletrace {

struct TrackerOptions {
  double gate_px = 6.0;              // largest distance from a prediction to its detection
  double ambiguity_ratio = 1.5;      // second-nearest must be this much farther, else ambiguous
  int max_gap_frames = 5;            // frames a track may miss and still continue
  int min_track_points = 8;          // shorter tracks are dropped at the end (glints)
  double search_margin_px = 12.0;    // half-size margin of the search regions around predictions

  std::string Validate() const;      // empty when valid
};

class Tracker {
 public:
  explicit Tracker(const TrackerOptions& options);

  // Regions where the next frame's detections are expected (around each live track's
  // prediction). Empty when there are no live tracks: then search the whole frame.
  std::vector<cv::Rect> SearchRegions(int frame, cv::Size image_size) const;

  // Adds the detections of one frame (frames in increasing order; gaps allowed).
  void Add(int frame, double time_s, const std::vector<Detection>& detections);

  // The number of tracks alive at the last frame added (seen within max_gap_frames).
  int live_tracks() const;

  // All tracks with at least min_track_points points, as tracks.csv rows (marker empty),
  // track numbers from 1 in order of first appearance.
  std::vector<TrackPoint> Finish() const;

 private:
  struct Track {
    int id = 0;
    std::vector<TrackPoint> points;
    bool ended = false;
  };
  Eigen::Vector2d Predict(const Track& track, int frame) const;

  TrackerOptions options_;
  std::vector<Track> tracks_;
  int last_frame_ = -1;
  int next_id_ = 1;
};

}  // namespace tumbletrace
