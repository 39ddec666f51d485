#include "tumbletrace/identify/identify.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <numeric>
#include <opencv2/calib3d.hpp>
#include <set>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/model/camera_opencv.hpp"

namespace tumbletrace {
namespace {

using Pixels = std::map<int, Eigen::Vector2d>;  // frame -> pixel

struct PoseFit {
  bool ok = false;
  double rms_px = std::numeric_limits<double>::infinity();
  cv::Mat rvec, tvec;  // camera from body
};

class PoseSolver {
 public:
  PoseSolver(const Body& body, const Camera& camera)
      : body_(body), k_(OpenCvCameraMatrix(camera.intrinsics)), d_(OpenCvDistortion(camera.intrinsics)) {}

  // The pose of the body from marker ids and their pixels; rejects poses that put a
  // marker behind the camera or turn a flat dot away from it.
  PoseFit Solve(const std::vector<int>& marker_ids, const std::vector<Eigen::Vector2d>& pixels) const {
    std::vector<cv::Point3d> object;
    std::vector<cv::Point2d> image;
    for (size_t i = 0; i < marker_ids.size(); ++i) {
      const Eigen::Vector3d& m = body_.FindMarker(marker_ids[i])->at_body_m;
      object.emplace_back(m.x(), m.y(), m.z());
      image.emplace_back(pixels[i].x(), pixels[i].y());
    }
    // Several solvers, each refined: a near-planar layout gives any one of them a second,
    // wrong minimum now and then. The best valid pose wins.
    PoseFit best;
    for (const int method : {cv::SOLVEPNP_SQPNP, cv::SOLVEPNP_EPNP, cv::SOLVEPNP_IPPE}) {
      std::vector<cv::Mat> rvecs, tvecs;
      try {
        cv::solvePnPGeneric(object, image, k_, d_, rvecs, tvecs, false,
                            static_cast<cv::SolvePnPMethod>(method));
      } catch (const cv::Exception&) {
        continue;  // a configuration this solver cannot take (IPPE wants a flat layout)
      }
      for (size_t i = 0; i < rvecs.size(); ++i) {
        PoseFit fit = Check(marker_ids, object, image, rvecs[i], tvecs[i]);
        if (fit.ok && fit.rms_px < best.rms_px) best = fit;
      }
    }
    return best;
  }

  PoseFit Check(const std::vector<int>& marker_ids, const std::vector<cv::Point3d>& object,
                const std::vector<cv::Point2d>& image, cv::Mat rvec, cv::Mat tvec) const {
    PoseFit fit;
    cv::solvePnPRefineLM(object, image, k_, d_, rvec, tvec);
    fit.rvec = rvec;
    fit.tvec = tvec;
    cv::Mat rmat;
    cv::Rodrigues(fit.rvec, rmat);
    Eigen::Matrix3d r;
    for (int i = 0; i < 3; ++i) {
      for (int j = 0; j < 3; ++j) r(i, j) = rmat.at<double>(i, j);
    }
    const Eigen::Vector3d t(fit.tvec.at<double>(0), fit.tvec.at<double>(1), fit.tvec.at<double>(2));
    for (int id : marker_ids) {
      const Marker* m = body_.FindMarker(id);
      const Eigen::Vector3d x = r * m->at_body_m + t;
      if (x.z() <= 0) return fit;
      if (m->normal_body && (r * *m->normal_body).dot(-x) <= 0) return fit;  // faces away
    }
    std::vector<cv::Point2d> projected;
    cv::projectPoints(object, fit.rvec, fit.tvec, k_, d_, projected);
    double sum_sq = 0.0;
    for (size_t i = 0; i < image.size(); ++i) {
      const cv::Point2d e = projected[i] - image[i];
      sum_sq += e.dot(e);
    }
    fit.rms_px = std::sqrt(sum_sq / image.size());
    fit.ok = true;
    return fit;
  }

  Eigen::Vector2d Project(const PoseFit& pose, int marker_id) const {
    const Eigen::Vector3d& m = body_.FindMarker(marker_id)->at_body_m;
    std::vector<cv::Point2d> out;
    cv::projectPoints(std::vector<cv::Point3d>{{m.x(), m.y(), m.z()}}, pose.rvec, pose.tvec, k_, d_, out);
    return {out[0].x, out[0].y};
  }

 private:
  const Body& body_;
  cv::Mat k_, d_;
};

// The median per-frame rms of an assignment over the given frames (frames with fewer than
// four of its tracks are skipped); infinity when it fails on more than a quarter of them.
double ScoreAssignment(const std::map<int, int>& marker_of_track, const std::map<int, Pixels>& tracks,
                       const std::vector<int>& frames, const PoseSolver& solver) {
  std::vector<double> rms;
  int failed = 0;
  for (int frame : frames) {
    std::vector<int> ids;
    std::vector<Eigen::Vector2d> px;
    for (const auto& [track, marker] : marker_of_track) {
      const auto it = tracks.at(track).find(frame);
      if (it == tracks.at(track).end()) continue;
      ids.push_back(marker);
      px.push_back(it->second);
    }
    if (ids.size() < 4) continue;
    const PoseFit fit = solver.Solve(ids, px);
    if (!fit.ok) {
      ++failed;
      continue;
    }
    rms.push_back(fit.rms_px);
  }
  if (rms.empty() || failed * 4 > static_cast<int>(rms.size()) + failed) {
    return std::numeric_limits<double>::infinity();
  }
  std::nth_element(rms.begin(), rms.begin() + rms.size() / 2, rms.end());
  return rms[rms.size() / 2];
}


// One assignment of the anchor tracks to markers and its score (median per-frame rms over
// the verification frames, px).
struct Candidate {
  std::map<int, int> marker_of_track;
  double score = 0.0;
};

// Steps 1-2 of identification on a set of tracks: the anchor frame and every injective
// assignment of its tracks to the markers in `ids`, scored over verification frames, best
// first. `why` says what failed when `candidates` is empty.
struct AnchorResult {
  std::vector<Candidate> candidates;
  std::string why;
};

AnchorResult AssignAnchor(const std::map<int, Pixels>& tracks,
                          const std::map<int, std::vector<int>>& tracks_in_frame,
                          const std::vector<int>& ids, const PoseSolver& solver,
                          const IdentifyOptions& options) {
  AnchorResult out;
  const int n_markers = static_cast<int>(ids.size());
  // 1. The anchor frame: the most tracks present, then the longest-lived ones.
  auto life = [&](int track) { return static_cast<int>(tracks.at(track).size()); };
  int anchor_frame = -1;
  long best_key = -1;
  for (const auto& [frame, present] : tracks_in_frame) {
    const int usable = std::min<int>(present.size(), std::min(n_markers, options.max_anchor_tracks));
    long lives = 0;
    for (int t : present) lives += life(t);
    const long key = usable * 100000000L + lives;
    if (usable >= 4 && key > best_key) {
      best_key = key;
      anchor_frame = frame;
    }
  }
  if (anchor_frame < 0) {
    out.why = "no frame shows 4 or more marker tracks at once: the markers cannot be "
              "identified (are the markers found? see the detection settings)";
    return out;
  }
  std::vector<int> anchor_tracks = tracks_in_frame.at(anchor_frame);
  std::sort(anchor_tracks.begin(), anchor_tracks.end(),
            [&](int a, int b) { return life(a) > life(b); });
  anchor_tracks.resize(std::min<size_t>(anchor_tracks.size(),
                                        std::min(n_markers, options.max_anchor_tracks)));

  // Verification frames: spread over the frames where most anchor tracks are present.
  std::vector<int> shared;
  for (const auto& [frame, present] : tracks_in_frame) {
    int n = 0;
    for (int t : anchor_tracks) n += tracks.at(t).count(frame);
    if (n >= 4) shared.push_back(frame);
  }
  std::vector<int> verification = {anchor_frame};
  const int wanted = options.verification_frames;
  for (int i = 0; i < wanted && !shared.empty(); ++i) {
    verification.push_back(shared[(i * (shared.size() - 1)) / std::max(1, wanted - 1)]);
  }

  // 2. Every injective assignment of the anchor tracks to markers.
  struct Assignment {
    std::vector<int> markers;
    double score;
  };
  const auto assignments = [&](const std::vector<int>& anchor) {
    std::vector<Eigen::Vector2d> anchor_px;
    for (int t : anchor) anchor_px.push_back(tracks.at(t).at(anchor_frame));
    const int k = static_cast<int>(anchor.size());
    std::vector<Assignment> found;
    std::vector<int> chosen(k);
    std::vector<bool> used(n_markers, false);
    std::function<void(int)> enumerate = [&](int depth) {
      if (depth == k) {
        const PoseFit fit = solver.Solve(chosen, anchor_px);
        if (fit.ok && fit.rms_px <= options.accept_rms_px) found.push_back({chosen, fit.rms_px});
        return;
      }
      // A partial assignment of 4 or more tracks whose own best pose leaves more squared
      // error than the whole may have (k x accept^2) cannot be completed: its subtree is
      // skipped (9 markers and 7 tracks are 181440 assignments).
      if (depth >= 4) {
        const std::vector<int> part(chosen.begin(), chosen.begin() + depth);
        const std::vector<Eigen::Vector2d> part_px(anchor_px.begin(), anchor_px.begin() + depth);
        const PoseFit fit = solver.Solve(part, part_px);
        if (fit.ok && fit.rms_px * fit.rms_px * depth > k * options.accept_rms_px * options.accept_rms_px) return;
      }
      for (int m = 0; m < n_markers; ++m) {
        if (used[m]) continue;
        used[m] = true;
        chosen[depth] = ids[m];
        enumerate(depth + 1);
        used[m] = false;
      }
    };
    enumerate(0);
    return found;
  };
  std::vector<Assignment> candidates = assignments(anchor_tracks);
  // No assignment of them all: one of the anchor tracks may be no marker (a glint or a
  // highlight that follows the body, seen in every frame and so among the longest-lived).
  // Each is left out in turn (5 or more tracks, so that 4 remain); the set whose best pose
  // fits best is taken.
  if (candidates.empty() && anchor_tracks.size() >= 5) {
    double best_rms = std::numeric_limits<double>::infinity();
    std::vector<int> best_tracks;
    for (size_t drop = 0; drop < anchor_tracks.size(); ++drop) {
      std::vector<int> subset = anchor_tracks;
      subset.erase(subset.begin() + static_cast<std::ptrdiff_t>(drop));
      std::vector<Assignment> found = assignments(subset);
      for (const Assignment& c : found) {
        if (c.score < best_rms) {
          best_rms = c.score;
          best_tracks = subset;
          candidates = found;
        }
      }
    }
    if (!candidates.empty()) anchor_tracks = best_tracks;
  }
  const int k = static_cast<int>(anchor_tracks.size());
  if (candidates.empty()) {
    out.why = fmt::format(
        "no assignment of the {} tracks seen in frame {} to the body's {} markers fits a rigid "
        "pose within {:.1f} px: check the marker positions in the body file and the camera "
        "calibration",
        k, anchor_frame, n_markers, options.accept_rms_px);
    return out;
  }
  for (const Assignment& a : candidates) {
    Candidate c;
    for (int i = 0; i < k; ++i) c.marker_of_track[anchor_tracks[i]] = a.markers[i];
    c.score = ScoreAssignment(c.marker_of_track, tracks, verification, solver);
    if (std::isfinite(c.score)) out.candidates.push_back(std::move(c));
  }
  std::sort(out.candidates.begin(), out.candidates.end(),
            [](const Candidate& a, const Candidate& b) { return a.score < b.score; });
  if (out.candidates.empty()) {
    out.why = "no assignment of tracks to markers holds over the frames: the tracks do not "
              "move like one rigid body with the body file's layout";
  }
  return out;
}

// Labels further tracks from the poses of frames with enough identified markers (step 4).
void GrowLabels(const std::map<int, Pixels>& tracks,
                const std::map<int, std::vector<int>>& tracks_in_frame, const std::vector<int>& ids,
                const PoseSolver& solver, const IdentifyOptions& options, IdentifyReport* report) {
  for (int round = 0; round < 5; ++round) {
    std::map<int, PoseFit> poses;
    for (const auto& [frame, present] : tracks_in_frame) {
      std::vector<int> m;
      std::vector<Eigen::Vector2d> px;
      for (int t : present) {
        const auto it = report->marker_of_track.find(t);
        if (it == report->marker_of_track.end()) continue;
        m.push_back(it->second);
        px.push_back(tracks.at(t).at(frame));
      }
      if (static_cast<int>(m.size()) < options.min_markers) continue;
      PoseFit fit = solver.Solve(m, px);
      if (fit.ok && fit.rms_px <= options.accept_rms_px) poses[frame] = fit;
    }
    bool grew = false;
    for (const auto& [track, pixels] : tracks) {
      if (report->marker_of_track.count(track)) continue;
      // Median distance to each marker's projection over the frames with a pose.
      std::vector<std::pair<double, int>> by_marker;
      for (int id : ids) {
        std::vector<double> d;
        for (const auto& [frame, px] : pixels) {
          const auto it = poses.find(frame);
          if (it != poses.end()) d.push_back((solver.Project(it->second, id) - px).norm());
        }
        if (d.size() < 3) continue;
        std::nth_element(d.begin(), d.begin() + d.size() / 2, d.end());
        by_marker.emplace_back(d[d.size() / 2], id);
      }
      if (by_marker.empty()) continue;
      std::sort(by_marker.begin(), by_marker.end());
      const auto [distance, id] = by_marker.front();
      const bool clear = by_marker.size() == 1 || by_marker[1].first > 2.0 * distance;
      if (distance > options.label_distance_px || !clear) continue;
      // The marker must not already be taken by a track alive at the same time.
      bool overlaps = false;
      for (const auto& [other, marker] : report->marker_of_track) {
        if (marker != id) continue;
        for (const auto& [frame, px] : pixels) overlaps |= tracks.at(other).count(frame) > 0;
      }
      if (overlaps) continue;
      report->marker_of_track[track] = id;
      grew = true;
    }
    if (!grew) break;
  }

}

// The per-frame pose rms of a labelling over the given frames (frames where fewer than
// `min_markers` of its tracks are present are skipped), px.
std::vector<double> FrameRms(const std::map<int, int>& marker_of_track, const std::map<int, Pixels>& tracks,
                             const std::map<int, std::vector<int>>& tracks_in_frame,
                             const std::vector<int>& frames, const PoseSolver& solver, int min_markers) {
  std::vector<double> rms;
  for (int frame : frames) {
    std::vector<int> ids;
    std::vector<Eigen::Vector2d> px;
    for (int t : tracks_in_frame.at(frame)) {
      const auto it = marker_of_track.find(t);
      if (it == marker_of_track.end()) continue;
      ids.push_back(it->second);
      px.push_back(tracks.at(t).at(frame));
    }
    if (static_cast<int>(ids.size()) < min_markers) continue;
    const PoseFit fit = solver.Solve(ids, px);
    rms.push_back(fit.ok ? fit.rms_px : std::numeric_limits<double>::infinity());
  }
  return rms;
}

double Median(std::vector<double> v) {
  if (v.empty()) return std::numeric_limits<double>::infinity();
  std::nth_element(v.begin(), v.begin() + v.size() / 2, v.end());
  return v[v.size() / 2];
}

// Step 3, the choice among the anchor's assignments. Every assignment that scores nearly
// as well as the best on the verification frames (within 3 x best + 0.5 px) is grown to
// the other tracks (step 4), and the grown labellings are compared on the frames where
// they differ: with all their markers, a wrong assignment that four anchor tracks allowed
// shows, and a marker seen in few frames is judged where it is seen. The layout is
// ambiguous when a different labelling fits those frames within 1.5 x the best's rms +
// 0.02 px (a variance ratio of 2.25, over the tens of frames where they differ: far
// beyond chance when the two differ by more than the noise, and both carry the same
// centre biases there); the markers that swap are named. Returns the chosen labelling (with `start`'s labels), or
// an empty map with `why`.
std::map<int, int> ChooseLabelling(const AnchorResult& anchor, const std::map<int, int>& start,
                                   const std::map<int, Pixels>& tracks,
                                   const std::map<int, std::vector<int>>& tracks_in_frame,
                                   const std::vector<int>& ids, const PoseSolver& solver,
                                   const IdentifyOptions& options, double* best_rms, double* runner_up_rms,
                                   std::string* why) {
  const double band = 3.0 * anchor.candidates.front().score + 0.5;
  std::vector<std::map<int, int>> grown;
  std::vector<double> full;
  std::vector<int> all_frames;
  for (const auto& [frame, present] : tracks_in_frame) all_frames.push_back(frame);
  // Every frame counts, thinned to at most 120 for speed.
  const auto thin = [](const std::vector<int>& frames) {
    if (frames.size() <= 120) return frames;
    std::vector<int> out;
    for (int i = 0; i < 120; ++i) out.push_back(frames[(i * (frames.size() - 1)) / 119]);
    return out;
  };
  for (const Candidate& c : anchor.candidates) {
    if (c.score > band || grown.size() >= 4) break;
    IdentifyReport report;
    report.marker_of_track = start;
    for (const auto& [track, marker] : c.marker_of_track) report.marker_of_track[track] = marker;
    GrowLabels(tracks, tracks_in_frame, ids, solver, options, &report);
    full.push_back(Median(FrameRms(report.marker_of_track, tracks, tracks_in_frame, thin(all_frames), solver,
                                   options.min_markers)));
    grown.push_back(std::move(report.marker_of_track));
  }
  const size_t winner = std::min_element(full.begin(), full.end()) - full.begin();
  if (!std::isfinite(full[winner])) {
    *why = "no assignment of tracks to markers holds over the frames: the tracks do not move "
           "like one rigid body with the body file's layout";
    return {};
  }
  *best_rms = anchor.candidates[winner].score;
  *runner_up_rms = 0.0;
  for (size_t j = 0; j < grown.size(); ++j) {
    if (j == winner || grown[j] == grown[winner]) continue;
    // The frames where the two labellings differ on a track present there.
    std::vector<int> differ;
    for (const auto& [frame, present] : tracks_in_frame) {
      for (int t : present) {
        const auto a = grown[winner].find(t), b = grown[j].find(t);
        const int ma = a == grown[winner].end() ? -1 : a->second;
        const int mb = b == grown[j].end() ? -1 : b->second;
        if (ma != mb) {
          differ.push_back(frame);
          break;
        }
      }
    }
    const std::vector<double> rms_w =
        FrameRms(grown[winner], tracks, tracks_in_frame, thin(differ), solver, options.min_markers);
    const std::vector<double> rms_j =
        FrameRms(grown[j], tracks, tracks_in_frame, thin(differ), solver, options.min_markers);
    if (rms_w.empty() && rms_j.empty()) continue;  // they never differ where a pose is seen
    const double w = Median(rms_w), other = Median(rms_j);
    if (*runner_up_rms == 0.0 || anchor.candidates[j].score < *runner_up_rms) {
      *runner_up_rms = anchor.candidates[j].score;
    }
    if (other >= 1.5 * w + 0.02) continue;
    std::vector<std::string> swaps;
    for (const auto& [track, marker] : grown[winner]) {
      const auto it = grown[j].find(track);
      if (it != grown[j].end() && it->second != marker && anchor.candidates.front().marker_of_track.count(track)) {
        swaps.push_back(fmt::format("{} or {}", marker, it->second));
      }
    }
    std::sort(swaps.begin(), swaps.end());
    swaps.erase(std::unique(swaps.begin(), swaps.end()), swaps.end());
    std::string list;
    for (size_t i = 0; i < swaps.size(); ++i) list += (i ? "; " : "") + swaps[i];
    *why = fmt::format(
        "the marker layout is ambiguous in these views: two assignments of tracks to markers "
        "fit equally well ({:.2f} px and {:.2f} px rms where they differ), so these markers "
        "cannot be told apart: {}. Make the layout asymmetric (move or add a marker so that "
        "no rotation maps the layout onto itself) and film again",
        w, other, list.empty() ? "see the tracks" : list);
    return {};
  }
  return grown[winner];
}

}  // namespace

IdentifyReport IdentifyTracks(std::vector<TrackPoint>* points, const Body& body,
                              const Camera& camera, const IdentifyOptions& options) {
  IdentifyReport report;
  std::map<int, Pixels> tracks;
  std::map<int, std::vector<int>> tracks_in_frame;
  for (const TrackPoint& p : *points) {
    tracks[p.track][p.frame] = {p.x_px, p.y_px};
    tracks_in_frame[p.frame].push_back(p.track);
  }
  const int n_markers = static_cast<int>(body.markers.size());
  if (n_markers < 4) {
    throw DataError(fmt::format("the body has {} markers; identification and the fit need at "
                                "least 4", n_markers));
  }
  const PoseSolver solver(body, camera);
  std::vector<int> ids;
  for (const Marker& m : body.markers) ids.push_back(m.id);

  const AnchorResult anchor = AssignAnchor(tracks, tracks_in_frame, ids, solver, options);
  if (anchor.candidates.empty()) throw DataError(anchor.why);
  std::string why;
  report.marker_of_track = ChooseLabelling(anchor, {}, tracks, tracks_in_frame, ids, solver, options,
                                           &report.anchor_rms_px, &report.runner_up_rms_px, &why);
  if (report.marker_of_track.empty()) throw DataError(why);

  // 5. Markers that turned away and came back (a tumble, the other face of the body) start
  // new tracks that may never share a frame with identified ones: the tracks still
  // unlabelled are identified again from their own anchor frame, as at the start, accepted
  // only when unambiguous and when no marker would be seen twice in one frame; then grown.
  for (int round = 0; round < 8; ++round) {
    std::map<int, Pixels> rest;
    std::map<int, std::vector<int>> rest_in_frame;
    for (const auto& [track, pixels] : tracks) {
      if (report.marker_of_track.count(track) || pixels.size() < 5) continue;
      rest[track] = pixels;
      for (const auto& [frame, px] : pixels) rest_in_frame[frame].push_back(track);
    }
    if (rest.size() < 4) break;
    const AnchorResult again = AssignAnchor(rest, rest_in_frame, ids, solver, options);
    if (again.candidates.empty()) break;
    double rms = 0.0, runner_up = 0.0;
    std::string ignored;
    const std::map<int, int> labels = ChooseLabelling(again, report.marker_of_track, tracks, tracks_in_frame,
                                                      ids, solver, options, &rms, &runner_up, &ignored);
    if (labels.empty()) break;
    std::map<int, int> fresh;
    for (const auto& [track, marker] : labels) {
      if (!report.marker_of_track.count(track)) fresh[track] = marker;
    }
    bool clash = false;
    for (const auto& [track, marker] : fresh) {
      for (const auto& [other, other_marker] : report.marker_of_track) {
        if (other_marker != marker) continue;
        for (const auto& [frame, px] : tracks.at(track)) clash |= tracks.at(other).count(frame) > 0;
      }
    }
    if (clash || fresh.empty()) break;
    for (const auto& [track, marker] : fresh) report.marker_of_track[track] = marker;
  }

  for (const auto& [track, pixels] : tracks) {
    if (report.marker_of_track.count(track)) continue;
    report.unidentified_tracks.push_back(track);
    report.warnings.push_back(fmt::format(
        "track {} (frames {}-{}, {} points) matches no marker and is left out (a glint, a "
        "reflection or a marker seen too briefly)",
        track, pixels.begin()->first, pixels.rbegin()->first, pixels.size()));
  }
  for (TrackPoint& p : *points) {
    const auto it = report.marker_of_track.find(p.track);
    p.marker = it == report.marker_of_track.end() ? std::nullopt : std::optional<int>(it->second);
  }
  return report;
}

}  // namespace tumbletrace
