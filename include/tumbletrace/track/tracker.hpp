// Frame-to-frame association of detections into tracks.
//
// Each live track predicts its next position from its recent motion (constant
// acceleration over the last few points, constant velocity when short); detections are
// assigned to predictions by a global assignment (Hungarian method) inside a gate. A track
// missing for up to `max_gap_frames` frames is bridged; two tracks competing for one
// detection (dots that merge) or one track with two candidates of similar distance
// (a glint beside a dot) skip the frame rather than join wrongly, and end when the miss
// run exceeds `max_gap_frames`. A detection whose fitted outline is much smaller than its
// track's recent ones (a running median of their radii) is part of a marker (cut by the
// body's outline, half in shadow): the track keeps it for continuity with quality 0, which
// tells the fit to leave it out.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <opencv2/core.hpp>
#include <optional>
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
  double min_radius_of_track = 0.8;  // an outline radius below this share of the track's
                                     // running median marks a detection incomplete
  int radius_history = 15;           // points of that running median (outline-fitted ones)

  std::string Validate() const;      // empty when valid
};

class Tracker {
 public:
  explicit Tracker(const TrackerOptions& options);

  // Regions where the detections of `frame` (the next frame to add) are expected: per live
  // track a square of half-size search_margin_px + its gap-scaled gate around its
  // prediction, clipped to the image. Empty means "search the whole frame", returned when
  // there are no live tracks, on every 10th frame (frame % 10 == 0), and when the last frame
  // added left a detection unassigned to an existing track (something new is in view) or
  // ended a track, or a track would end by `frame` (the number of live tracks dropped).
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
    int id = 0;                      // creation order, which is the order of first appearance
    std::vector<TrackPoint> points;  // in frame order; `track` holds `id` until Finish()
    bool ended = false;              // ended tracks never revive
    bool merging = false;            // bridging a merge with another dot since its last point
    std::vector<double> radii_px;    // outline radii of its last complete fitted detections
  };
  // Position expected at `frame` from the track's last points (frame number as time).
  Eigen::Vector2d Predict(const Track& track, int frame) const;
  // Frames the track has missed before `frame` (0 when seen in the frame before).
  int Missed(const Track& track, int frame) const;
  // gate_px * (1 + 0.5 * Missed): the gate widens while a track is bridged.
  double Gate(const Track& track, int frame) const;
  // The track's point for detection `d`, and the running median of its radii updated:
  // an outline-fitted detection well below that median gets quality 0.
  TrackPoint PointFor(Track* track, const Detection& d, int frame, double time_s) const;

  TrackerOptions options_;
  std::vector<Track> tracks_;          // every track ever started, in creation order
  std::vector<std::size_t> live_;      // indices into tracks_ of the tracks not ended
  std::optional<int> last_frame_;      // the last frame added
  bool search_full_frame_ = true;      // the last frame left detections unassigned or ended a track
};

}  // namespace tumbletrace
