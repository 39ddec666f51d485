#include "tumbletrace/track/tracker.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <tuple>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {

namespace {

// A track with this many points predicts by a fitted constant acceleration; only such
// tracks count as rival claimants of a merged detection (a younger track predicts from its
// last position or a two-point line, too crudely to tell a merge from a near miss).
constexpr std::size_t kEstablishedPoints = 3;
// Points of the constant-acceleration fit.
constexpr std::size_t kFitPoints = 5;
// Fraction of the (widened) gate below which two distances from a prediction are not told
// apart by the ambiguity test.
constexpr double kPredictionResolution = 0.25;
// Every this many frames the caller is asked to search the whole frame.
constexpr int kFullSearchEvery = 10;

std::string Number(double value) {
  std::ostringstream out;
  out << value;
  return out.str();
}

// Minimum-cost perfect assignment of a square cost matrix; returns the column of each row.
// The Hungarian method (Kuhn 1955, Naval Research Logistics Quarterly 2:83-97) in its
// shortest-augmenting-path form with row and column potentials, O(n^3) (Jonker and
// Volgenant 1987, Computing 38:325-340); written from memory.
std::vector<int> SolveAssignment(const Eigen::MatrixXd& cost) {
  const int n = static_cast<int>(cost.rows());
  const double infinity = std::numeric_limits<double>::infinity();
  // 1-based: column 0 and row 0 are the virtual start of each augmenting path.
  std::vector<double> u(n + 1, 0.0), v(n + 1, 0.0), min_reduced(n + 1);
  std::vector<int> row_of_column(n + 1, 0), previous_column(n + 1, 0);
  std::vector<char> visited(n + 1);
  for (int row = 1; row <= n; ++row) {
    row_of_column[0] = row;
    int column = 0;
    std::fill(min_reduced.begin(), min_reduced.end(), infinity);
    std::fill(visited.begin(), visited.end(), 0);
    do {
      visited[column] = 1;
      const int r = row_of_column[column];
      double delta = infinity;
      int next_column = 0;
      for (int j = 1; j <= n; ++j) {
        if (visited[j]) continue;
        const double reduced = cost(r - 1, j - 1) - u[r] - v[j];
        if (reduced < min_reduced[j]) {
          min_reduced[j] = reduced;
          previous_column[j] = column;
        }
        if (min_reduced[j] < delta) {
          delta = min_reduced[j];
          next_column = j;
        }
      }
      for (int j = 0; j <= n; ++j) {
        if (visited[j]) {
          u[row_of_column[j]] += delta;
          v[j] -= delta;
        } else {
          min_reduced[j] -= delta;
        }
      }
      column = next_column;
    } while (row_of_column[column] != 0);
    do {
      const int before = previous_column[column];
      row_of_column[column] = row_of_column[before];
      column = before;
    } while (column != 0);
  }
  std::vector<int> column_of_row(n, -1);
  for (int j = 1; j <= n; ++j) column_of_row[row_of_column[j] - 1] = j - 1;
  return column_of_row;
}

struct Candidate {
  int detection = 0;
  double distance_px = 0.0;
};

// One live track's view of the frame being added.
struct Claim {
  std::size_t track = 0;            // index into the tracker's tracks
  double gate_px = 0.0;             // gap-scaled
  std::vector<Candidate> candidates;  // detections inside the gate, nearest first
  bool sits_out = false;            // ambiguous or merged: counts a miss this frame
};

}  // namespace

std::string TrackerOptions::Validate() const {
  if (!(std::isfinite(gate_px) && gate_px > 0)) {
    return "gate_px must be a positive number of pixels (got " + Number(gate_px) + ")";
  }
  if (!(std::isfinite(ambiguity_ratio) && ambiguity_ratio >= 1)) {
    return "ambiguity_ratio must be at least 1 (got " + Number(ambiguity_ratio) + ")";
  }
  if (max_gap_frames < 0) {
    return "max_gap_frames must be 0 or more (got " + std::to_string(max_gap_frames) + ")";
  }
  if (min_track_points < 1) {
    return "min_track_points must be at least 1 (got " + std::to_string(min_track_points) + ")";
  }
  if (!(std::isfinite(search_margin_px) && search_margin_px >= 0)) {
    return "search_margin_px must be 0 or more pixels (got " + Number(search_margin_px) + ")";
  }
  if (!(min_radius_of_track >= 0 && min_radius_of_track <= 1)) {
    return "min_radius_of_track must be 0..1 (got " + Number(min_radius_of_track) + ")";
  }
  if (radius_history < 1) {
    return "radius_history must be at least 1 (got " + std::to_string(radius_history) + ")";
  }
  return "";
}

Tracker::Tracker(const TrackerOptions& options) : options_(options) {
  if (const std::string why = options_.Validate(); !why.empty()) {
    throw InputError("tracker options: " + why);
  }
}

int Tracker::Missed(const Track& track, int frame) const {
  return frame - track.points.back().frame - 1;
}

double Tracker::Gate(const Track& track, int frame) const {
  return options_.gate_px * (1.0 + 0.5 * std::max(0, Missed(track, frame)));
}

// With the frame number f as time and the last point at f_n:
//   one point:     p(f) = p_n
//   two points:    p(f) = p_n + (p_n - p_{n-1}) (f - f_n) / (f_n - f_{n-1})
//   three or more: p(f) = a + b (f - f_n) + c (f - f_n)^2, least squares over the last five
// (constant velocity, constant acceleration; common practice in particle tracking).
Eigen::Vector2d Tracker::Predict(const Track& track, int frame) const {
  const std::vector<TrackPoint>& points = track.points;
  const TrackPoint& last = points.back();
  const Eigen::Vector2d last_px(last.x_px, last.y_px);
  const double dt = frame - last.frame;
  if (points.size() == 1) return last_px;
  if (points.size() == 2) {
    const TrackPoint& before = points.front();
    const Eigen::Vector2d velocity =
        (last_px - Eigen::Vector2d(before.x_px, before.y_px)) / double(last.frame - before.frame);
    return last_px + velocity * dt;
  }
  const std::size_t m = std::min(points.size(), kFitPoints);
  Eigen::MatrixXd design(m, 3);
  Eigen::MatrixXd xy(m, 2);
  for (std::size_t i = 0; i < m; ++i) {
    const TrackPoint& p = points[points.size() - m + i];
    const double t = p.frame - last.frame;  // centred on the last point: well conditioned
    design.row(i) << 1.0, t, t * t;
    xy.row(i) << p.x_px, p.y_px;
  }
  const Eigen::Matrix<double, 3, 2> coefficients = design.colPivHouseholderQr().solve(xy);
  return (Eigen::RowVector3d(1.0, dt, dt * dt) * coefficients).transpose();
}

std::vector<cv::Rect> Tracker::SearchRegions(int frame, cv::Size image_size) const {
  if (live_.empty() || frame % kFullSearchEvery == 0 || search_full_frame_) return {};
  const cv::Rect image(0, 0, image_size.width, image_size.height);
  std::vector<cv::Rect> regions;
  for (const std::size_t index : live_) {
    const Track& track = tracks_[index];
    if (Missed(track, frame) > options_.max_gap_frames) return {};  // it ends at `frame`
    const Eigen::Vector2d predicted_px = Predict(track, frame);
    const double half_px = options_.search_margin_px + Gate(track, frame);
    // Pixel i covers [i - 0.5, i + 0.5]; clamp before converting so that a prediction far
    // outside the image cannot overflow.
    const auto bound = [](double value, int size) {
      return static_cast<int>(std::clamp(value, -1.0, size + 1.0));
    };
    const int x0 = bound(std::floor(predicted_px.x() - half_px + 0.5), image_size.width);
    const int y0 = bound(std::floor(predicted_px.y() - half_px + 0.5), image_size.height);
    const int x1 = bound(std::ceil(predicted_px.x() + half_px + 0.5), image_size.width);
    const int y1 = bound(std::ceil(predicted_px.y() + half_px + 0.5), image_size.height);
    const cv::Rect region = cv::Rect(x0, y0, x1 - x0, y1 - y0) & image;
    if (region.area() > 0) regions.push_back(region);
  }
  return regions;  // empty (the whole frame) when every prediction left the image
}

void Tracker::Add(int frame, double time_s, const std::vector<Detection>& detections) {
  if (last_frame_ && frame <= *last_frame_) {
    throw InputError("tracker: frame " + std::to_string(frame) + " added after frame " +
                     std::to_string(*last_frame_) + "; frames must increase");
  }
  for (std::size_t k = 0; k < detections.size(); ++k) {
    if (!detections[k].center_px.allFinite()) {
      throw InputError("tracker: detection " + std::to_string(k) + " of frame " +
                       std::to_string(frame) + " has a non-finite centre");
    }
  }
  const int n_detections = static_cast<int>(detections.size());
  bool ended_a_track = false;

  // Tracks that missed more than max_gap_frames already (frame numbers skipped) end unseen.
  std::vector<Claim> claims;
  for (const std::size_t index : live_) {
    Track& track = tracks_[index];
    if (Missed(track, frame) > options_.max_gap_frames) {
      track.ended = true;
      ended_a_track = true;
      continue;
    }
    Claim claim;
    claim.track = index;
    claim.gate_px = Gate(track, frame);
    const Eigen::Vector2d predicted_px = Predict(track, frame);
    for (int d = 0; d < n_detections; ++d) {
      const double distance_px = (detections[d].center_px - predicted_px).norm();
      if (distance_px <= claim.gate_px) claim.candidates.push_back({d, distance_px});
    }
    std::sort(claim.candidates.begin(), claim.candidates.end(),
              [](const Candidate& a, const Candidate& b) {
                return std::tie(a.distance_px, a.detection) < std::tie(b.distance_px, b.detection);
              });
    claims.push_back(std::move(claim));
  }

  // withheld: not assigned this frame, and not the start of a new track either (it lies
  // where a live track cannot tell which detection is its own).
  std::vector<char> withheld(n_detections, 0);
  std::vector<char> blocked(n_detections, 0);  // given to no track this frame

  // Ambiguity: a second detection nearly as close as the nearest (a glint beside the dot, or
  // two dots just apart) makes the track sit this frame out rather than guess. Distances
  // below a fraction of the gate are within the prediction's own error and are not told
  // apart: the nearest counts as at least that far.
  for (Claim& claim : claims) {
    const std::vector<Candidate>& c = claim.candidates;
    if (c.size() < 2) continue;
    const double limit_px = options_.ambiguity_ratio *
                            std::max(c[0].distance_px, kPredictionResolution * claim.gate_px);
    if (!(c[1].distance_px < limit_px)) continue;
    claim.sits_out = true;
    for (const Candidate& candidate : c) {
      if (candidate.distance_px < limit_px) withheld[candidate.detection] = 1;
    }
  }

  // Leaving a merge: a track that bridged a merge resumes only on a detection alone in its
  // widened gate. Its prediction drifted over the bridged frames while the dots are still
  // close, so taking the nearer of two could swap them: it waits, and ends after
  // max_gap_frames, rather than guess. The detections it waits on start no tracks meanwhile.
  for (Claim& claim : claims) {
    if (!tracks_[claim.track].merging || claim.candidates.size() < 2) continue;
    claim.sits_out = true;
    for (const Candidate& c : claim.candidates) withheld[c.detection] = 1;
  }

  // Merges: two or more established tracks whose only candidate is the same detection are
  // two dots seen as one blob. The blob is given to none of them (its centre lies between
  // the dots) and they bridge the frame. A claimant with a second candidate stays in the
  // assignment, which may explain it by that detection. A merge begins only inside the
  // unwidened gate (a bridged track's wide gate may reach a neighbour's dot, which is no
  // merge); once begun it holds inside the widened gates, as the predictions drift apart.
  std::vector<std::vector<std::size_t>> sole_claimants(n_detections);
  for (std::size_t k = 0; k < claims.size(); ++k) {
    const Claim& claim = claims[k];
    const Track& track = tracks_[claim.track];
    if (claim.sits_out || claim.candidates.size() != 1) continue;
    if (track.points.size() < kEstablishedPoints) continue;
    if (!track.merging && claim.candidates[0].distance_px > options_.gate_px) continue;
    sole_claimants[claim.candidates[0].detection].push_back(k);
  }
  for (int d = 0; d < n_detections; ++d) {
    if (sole_claimants[d].size() < 2) continue;
    blocked[d] = withheld[d] = 1;
    for (const std::size_t k : sole_claimants[d]) {
      claims[k].sits_out = true;
      tracks_[claims[k].track].merging = true;
    }
  }

  // Global nearest-neighbour assignment of the remaining tracks to the remaining detections:
  // minimum total of (d_ij / gate_i)^2, the squared distance in units of the track's gate
  // (which widens with its gap, as its prediction grows uncertain), where leaving a track
  // unassigned costs 1 (the gate's edge) and a detection may stay unassigned at no cost.
  // Square matrix of size T + D, rows the tracks then one row per detection, columns the
  // detections then one "miss" column per track:
  //   [ (d_ij / gate_i)^2 (in the gate)   diag(1) ]
  //   [ diag(0)                           0       ]
  // with every other entry forbidden.
  std::vector<std::size_t> rows;  // indices into claims
  std::vector<int> columns;       // detection indices
  std::vector<int> column_of_detection(n_detections, -1);
  for (std::size_t k = 0; k < claims.size(); ++k) {
    if (claims[k].sits_out) continue;
    bool any = false;
    for (const Candidate& c : claims[k].candidates) {
      if (blocked[c.detection]) continue;
      any = true;
      if (column_of_detection[c.detection] < 0) {
        column_of_detection[c.detection] = static_cast<int>(columns.size());
        columns.push_back(c.detection);
      }
    }
    if (any) rows.push_back(k);
  }
  std::vector<int> assigned_track(n_detections, -1);  // index into tracks_
  if (!rows.empty()) {
    const int n_rows = static_cast<int>(rows.size());
    const int n_columns = static_cast<int>(columns.size());
    const int n = n_rows + n_columns;
    // Larger than any sum of allowed costs (each at most 1): never part of the solution.
    const double forbidden = 1e3 * n;
    Eigen::MatrixXd cost = Eigen::MatrixXd::Constant(n, n, forbidden);
    for (int i = 0; i < n_rows; ++i) {
      const Claim& claim = claims[rows[i]];
      for (const Candidate& c : claim.candidates) {
        if (blocked[c.detection]) continue;
        const double normalised = c.distance_px / claim.gate_px;
        cost(i, column_of_detection[c.detection]) = normalised * normalised;
      }
      cost(i, n_columns + i) = 1.0;
    }
    for (int j = 0; j < n_columns; ++j) {
      cost(n_rows + j, j) = 0.0;
      for (int i = 0; i < n_rows; ++i) cost(n_rows + j, n_columns + i) = 0.0;
    }
    const std::vector<int> column_of_row = SolveAssignment(cost);
    for (int i = 0; i < n_rows; ++i) {
      const int j = column_of_row[i];
      if (j < n_columns && cost(i, j) < forbidden) {
        assigned_track[columns[j]] = static_cast<int>(claims[rows[i]].track);
      }
    }
  }

  // Extend the assigned tracks, start tracks from the free detections, end the lost ones.
  bool unassigned_detection = false;
  for (int d = 0; d < n_detections; ++d) {
    if (assigned_track[d] >= 0) {
      Track& track = tracks_[assigned_track[d]];
      track.points.push_back(PointFor(&track, detections[d], frame, time_s));
      track.merging = false;
    } else {
      unassigned_detection = true;
    }
  }
  std::vector<std::size_t> live;
  for (const std::size_t index : live_) {
    Track& track = tracks_[index];
    if (!track.ended && frame - track.points.back().frame > options_.max_gap_frames) {
      track.ended = true;
      ended_a_track = true;
    }
    if (!track.ended) live.push_back(index);
  }
  for (int d = 0; d < n_detections; ++d) {
    if (assigned_track[d] >= 0 || withheld[d]) continue;
    Track track;
    track.id = static_cast<int>(tracks_.size()) + 1;
    track.points.push_back(PointFor(&track, detections[d], frame, time_s));
    live.push_back(tracks_.size());
    tracks_.push_back(std::move(track));
  }
  live_ = std::move(live);
  last_frame_ = frame;
  search_full_frame_ = unassigned_detection || ended_a_track;
}

// Incomplete: r < min_radius_of_track x median of the track's last radius_history complete
// outline radii, once it has 3 of them (a median of fewer is one noisy radius); a detection
// without an outline (too small for one: what is left of a marker mostly hidden) is
// compared by the radius of its thresholded area. Tracks of small dots have no outline radii
// and are never marked. A marker cut by an
// edge keeps the radius of its visible arc's circle, but its blob shrinks, and a cut that
// the detector's completeness measures pass (a share of the disc in shadow, whose outline
// fits a smaller circle) shows here.
TrackPoint Tracker::PointFor(Track* track, const Detection& d, int frame, double time_s) const {
  TrackPoint p;
  p.frame = frame;
  p.time_s = time_s;
  p.track = track->id;
  p.x_px = d.center_px.x();
  p.y_px = d.center_px.y();
  p.quality = d.quality;
  p.sigma_px = d.sigma_px;
  p.radius_px = d.radius_px;
  p.outline_fitted = d.outline_fitted;
  std::vector<double>& radii = track->radii_px;
  if (radii.size() >= 3) {
    std::vector<double> sorted = radii;
    const auto middle = sorted.begin() + sorted.size() / 2;
    std::nth_element(sorted.begin(), middle, sorted.end());
    if (d.radius_px < options_.min_radius_of_track * *middle) {
      p.quality = 0.0;  // kept for continuity; the fit leaves it out
      return p;
    }
  }
  if (!d.outline_fitted) return p;  // a thresholded area's radius is no outline's
  radii.push_back(d.radius_px);
  if (static_cast<int>(radii.size()) > options_.radius_history) radii.erase(radii.begin());
  return p;
}

int Tracker::live_tracks() const { return static_cast<int>(live_.size()); }

std::vector<TrackPoint> Tracker::Finish() const {
  std::vector<TrackPoint> rows;
  int number = 0;
  for (const Track& track : tracks_) {
    if (static_cast<int>(track.points.size()) < options_.min_track_points) continue;
    ++number;
    for (TrackPoint p : track.points) {
      p.track = number;
      rows.push_back(p);
    }
  }
  std::stable_sort(rows.begin(), rows.end(), [](const TrackPoint& a, const TrackPoint& b) {
    return std::tie(a.frame, a.track) < std::tie(b.frame, b.track);
  });
  return rows;
}

}  // namespace tumbletrace
