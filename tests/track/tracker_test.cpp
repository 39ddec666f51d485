#include "tumbletrace/track/tracker.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <functional>
#include <limits>
#include <map>
#include <random>
#include <set>

#include "support/scenarios.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/sim/simulate.hpp"

namespace tumbletrace {
namespace {

constexpr double kNoisePx = 0.1;           // detection noise added to the exact pixels, per axis
constexpr double kSameMarkerPx = 1.0;      // a point this close to a true marker is that marker's
const cv::Size kImageSize(1024, 768);      // FacingCamera's image

const Simulation& PlanarSpinFlight() {
  static const Simulation sim = SimulateFlight(testing::PlanarSpinScenario(0.0));
  return sim;
}

Detection DetectionAt(const Eigen::Vector2d& px, double quality = 0.9) {
  Detection d;
  d.center_px = px;
  d.area_px = 12.0;
  d.quality = quality;
  return d;
}

// What the tracker is fed besides the markers' noisy true pixels.
struct Feed {
  std::function<bool(int frame, int marker)> hidden;  // marker not detected in that frame
  std::set<int> skipped_frames;                        // frame numbers never added
  int glints_per_frame = 0;                            // spurious detections, anywhere
  // Called before each Add with the frame number and the regions the tracker asks for.
  std::function<void(int frame, const std::vector<cv::Rect>& regions)> on_regions;
};

std::vector<TrackPoint> Track(const Simulation& sim, const TrackerOptions& options,
                              const Feed& feed, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> noise(0.0, kNoisePx);
  std::uniform_real_distribution<double> glint_x(0.0, kImageSize.width - 1.0);
  std::uniform_real_distribution<double> glint_y(0.0, kImageSize.height - 1.0);
  Tracker tracker(options);
  for (const FrameTruth& truth : sim.frames) {
    if (feed.skipped_frames.count(truth.frame)) continue;
    if (feed.on_regions) feed.on_regions(truth.frame, tracker.SearchRegions(truth.frame, kImageSize));
    std::vector<Detection> detections;
    for (const MarkerTruth& m : truth.markers) {
      if (!m.visible || (feed.hidden && feed.hidden(truth.frame, m.id))) continue;
      detections.push_back(DetectionAt(m.pixel + Eigen::Vector2d(noise(rng), noise(rng)),
                                       0.5 + 0.05 * m.id));
    }
    for (int g = 0; g < feed.glints_per_frame; ++g) {
      detections.push_back(DetectionAt({glint_x(rng), glint_y(rng)}, 0.2));
    }
    tracker.Add(truth.frame, truth.time_s, detections);
  }
  return tracker.Finish();
}

// The marker whose true pixel is nearest the point at its frame, and the distance.
std::pair<int, double> NearestMarker(const Simulation& sim, const TrackPoint& p) {
  int id = 0;
  double best_px = std::numeric_limits<double>::infinity();
  for (const MarkerTruth& m : sim.frames.at(p.frame).markers) {
    const double d = (m.pixel - Eigen::Vector2d(p.x_px, p.y_px)).norm();
    if (d < best_px) {
      best_px = d;
      id = m.id;
    }
  }
  return {id, best_px};
}

std::map<int, std::vector<TrackPoint>> ByTrack(const std::vector<TrackPoint>& points) {
  std::map<int, std::vector<TrackPoint>> tracks;
  for (const TrackPoint& p : points) tracks[p.track].push_back(p);
  return tracks;
}

// The one marker all points of a track belong to, or 0 when they are not all of one
// marker (a point far from every marker counts as foreign too).
int MarkerOfTrack(const Simulation& sim, const std::vector<TrackPoint>& track) {
  std::set<int> markers;
  for (const TrackPoint& p : track) {
    const auto [id, distance_px] = NearestMarker(sim, p);
    markers.insert(distance_px < kSameMarkerPx ? id : 0);
  }
  return markers.size() == 1 ? *markers.begin() : 0;
}

TEST(Tracker, CleanFlightGivesOneTrackPerMarkerForTheWholeFlight) {
  const Simulation& sim = PlanarSpinFlight();
  const std::vector<TrackPoint> points = Track(sim, TrackerOptions{}, Feed{}, 11);
  const auto tracks = ByTrack(points);
  ASSERT_EQ(tracks.size(), 6u);
  std::set<int> markers;
  for (const auto& [number, track] : tracks) {
    const int marker = MarkerOfTrack(sim, track);
    EXPECT_NE(marker, 0) << "track " << number << " mixes markers";
    markers.insert(marker);
    EXPECT_EQ(track.size(), sim.frames.size()) << "track " << number;
  }
  EXPECT_EQ(markers.size(), 6u);
  // Rows as tracks.csv wants them: by frame then track, unidentified, numbered from 1,
  // times and qualities as added.
  EXPECT_EQ(tracks.begin()->first, 1);
  EXPECT_EQ(tracks.rbegin()->first, 6);
  for (std::size_t i = 1; i < points.size(); ++i) {
    EXPECT_TRUE(std::tie(points[i - 1].frame, points[i - 1].track) <
                std::tie(points[i].frame, points[i].track));
  }
  for (const TrackPoint& p : points) {
    EXPECT_FALSE(p.marker.has_value());
    EXPECT_EQ(p.time_s, sim.frames[p.frame].time_s);
    EXPECT_NEAR(p.quality, 0.5 + 0.05 * NearestMarker(sim, p).first, 1e-12);
  }
}

TEST(Tracker, TracksAreNumberedInOrderOfFirstAppearance) {
  const Simulation& sim = PlanarSpinFlight();
  Feed feed;
  feed.hidden = [](int frame, int marker) { return frame < 10 * marker; };  // marker k from 10k
  const auto tracks = ByTrack(Track(sim, TrackerOptions{}, feed, 12));
  ASSERT_EQ(tracks.size(), 6u);
  for (const auto& [number, track] : tracks) {
    EXPECT_EQ(MarkerOfTrack(sim, track), number);
    EXPECT_EQ(track.front().frame, 10 * number);
  }
}

TEST(Tracker, ShortOcclusionIsBridged) {
  const Simulation& sim = PlanarSpinFlight();
  Feed feed;
  // Marker 5 is the one closest to its neighbours (about 22 px from marker 4).
  feed.hidden = [](int frame, int marker) { return marker == 5 && frame >= 100 && frame < 103; };
  const auto tracks = ByTrack(Track(sim, TrackerOptions{}, feed, 13));
  ASSERT_EQ(tracks.size(), 6u);
  for (const auto& [number, track] : tracks) {
    const int marker = MarkerOfTrack(sim, track);
    ASSERT_NE(marker, 0) << "track " << number << " mixes markers";
    EXPECT_EQ(track.size(), sim.frames.size() - (marker == 5 ? 3 : 0));
  }
}

TEST(Tracker, LongOcclusionEndsTheTrackAndTheMarkerReturnsAsANewTrack) {
  const Simulation& sim = PlanarSpinFlight();
  Feed feed;
  feed.hidden = [](int frame, int marker) { return marker == 5 && frame >= 100 && frame < 120; };
  const auto tracks = ByTrack(Track(sim, TrackerOptions{}, feed, 14));
  ASSERT_EQ(tracks.size(), 7u);
  std::map<int, std::vector<int>> tracks_of_marker;
  for (const auto& [number, track] : tracks) {
    const int marker = MarkerOfTrack(sim, track);
    ASSERT_NE(marker, 0) << "track " << number << " mixes markers";
    tracks_of_marker[marker].push_back(number);
  }
  ASSERT_EQ(tracks_of_marker.size(), 6u);
  ASSERT_EQ(tracks_of_marker[5].size(), 2u);
  const std::vector<TrackPoint>& before = tracks.at(tracks_of_marker[5][0]);
  const std::vector<TrackPoint>& after = tracks.at(tracks_of_marker[5][1]);
  EXPECT_EQ(before.front().frame, 0);
  EXPECT_EQ(before.back().frame, 99);
  EXPECT_EQ(after.front().frame, 120);
  EXPECT_EQ(after.back().frame, 249);
  EXPECT_EQ(after.front().track, 7);  // the newest track: numbered last
}

TEST(Tracker, GlintsNeverEnterMarkerTracks) {
  const Simulation& sim = PlanarSpinFlight();
  Feed feed;
  feed.glints_per_frame = 2;
  // Default options: the glints' short tracks are dropped.
  {
    const auto tracks = ByTrack(Track(sim, TrackerOptions{}, feed, 15));
    ASSERT_EQ(tracks.size(), 6u);
    std::set<int> markers;
    for (const auto& [number, track] : tracks) {
      const int marker = MarkerOfTrack(sim, track);
      EXPECT_NE(marker, 0) << "track " << number << " holds a glint";
      markers.insert(marker);
      EXPECT_EQ(track.size(), sim.frames.size()) << "track " << number;
    }
    EXPECT_EQ(markers.size(), 6u);
  }
  // Keeping every track: the glints are there, in tracks of their own.
  {
    TrackerOptions options;
    options.min_track_points = 1;
    const auto tracks = ByTrack(Track(sim, options, feed, 15));
    int marker_tracks = 0;
    int glint_tracks = 0;
    for (const auto& [number, track] : tracks) {
      if (track.size() > 10) {
        ++marker_tracks;
        EXPECT_NE(MarkerOfTrack(sim, track), 0) << "track " << number << " holds a glint";
        continue;
      }
      ++glint_tracks;
      for (const TrackPoint& p : track) {
        EXPECT_GT(NearestMarker(sim, p).second, kSameMarkerPx)
            << "glint track " << number << " holds a marker at frame " << p.frame;
      }
    }
    EXPECT_EQ(marker_tracks, 6);
    EXPECT_GT(glint_tracks, 250);  // most of the 500 glints start a track of their own
  }
}

// Two dots on a common curved path, offset across it by `rate_px_per_frame` x (t - 60):
// they cross at frame 60. While closer than 2 px the detector sees one blob at their midpoint.
// The dots move 3 to 5 px per frame, as the hammer's markers do.
struct CrossingPair {
  double rate_px_per_frame = 1.0;
  int frames = 120;

  Eigen::Vector2d Centre(int t) const {
    return {200.0 + 3.0 * t + 0.01 * t * t, 300.0 + 1.5 * t - 0.005 * t * t};
  }
  Eigen::Vector2d Dot(int which, int t) const {
    const double offset_px = 0.5 * rate_px_per_frame * (t - 60) * (which == 0 ? 1.0 : -1.0);
    return Centre(t) + Eigen::Vector2d(0.0, offset_px);
  }
  bool Merged(int t) const { return (Dot(0, t) - Dot(1, t)).norm() < 2.0; }

  std::vector<TrackPoint> Track(const TrackerOptions& options, std::uint64_t seed) const {
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> noise(0.0, kNoisePx);
    Tracker tracker(options);
    for (int t = 0; t < frames; ++t) {
      std::vector<Detection> detections;
      if (Merged(t)) {
        detections.push_back(DetectionAt(Centre(t) + Eigen::Vector2d(noise(rng), noise(rng))));
      } else {
        for (int which = 0; which < 2; ++which) {
          detections.push_back(DetectionAt(Dot(which, t) + Eigen::Vector2d(noise(rng), noise(rng))));
        }
      }
      tracker.Add(t, t * 1e-3, detections);
    }
    return tracker.Finish();
  }

  // The dots each track's resolved points (frames where the dots are apart) belong to.
  std::map<int, std::set<int>> DotsOfTracks(const std::vector<TrackPoint>& points) const {
    std::map<int, std::set<int>> dots;
    for (const TrackPoint& p : points) {
      dots[p.track];
      if (Merged(p.frame)) continue;
      const Eigen::Vector2d at(p.x_px, p.y_px);
      const double d0 = (Dot(0, p.frame) - at).norm();
      const double d1 = (Dot(1, p.frame) - at).norm();
      dots[p.track].insert(std::min(d0, d1) > kSameMarkerPx ? -1 : (d0 < d1 ? 0 : 1));
    }
    return dots;
  }
};

// Each track's resolved points are of one dot, and each dot has a track after the crossing.
void ExpectNoSwitch(const CrossingPair& pair, const std::vector<TrackPoint>& points,
                    std::uint64_t seed) {
  std::set<int> dots_after;
  for (const auto& [track, dots] : pair.DotsOfTracks(points)) {
    EXPECT_LE(dots.size(), 1u) << "track " << track << " switched dots, seed " << seed;
    EXPECT_FALSE(dots.count(-1)) << "track " << track << " strays from both dots, seed " << seed;
  }
  for (const auto& [number, track] : ByTrack(points)) {
    if (track.back().frame != pair.frames - 1) continue;
    const std::set<int> dots = pair.DotsOfTracks(track).at(number);
    dots_after.insert(dots.begin(), dots.end());
  }
  EXPECT_EQ(dots_after, (std::set<int>{0, 1})) << "seed " << seed;
}

TEST(Tracker, DotsCrossingFastAreBridgedAndTheBlobJoinsNeither) {
  const CrossingPair pair{6.0, 120};  // merged in one frame only
  int merged_frames = 0;
  for (int t = 0; t < pair.frames; ++t) merged_frames += pair.Merged(t);
  ASSERT_EQ(merged_frames, 1);
  const std::vector<TrackPoint> points = pair.Track(TrackerOptions{}, 16);
  ExpectNoSwitch(pair, points, 16);
  const auto tracks = ByTrack(points);
  ASSERT_EQ(tracks.size(), 2u);
  for (const auto& [number, track] : tracks) {
    EXPECT_EQ(track.front().frame, 0);
    EXPECT_EQ(track.back().frame, pair.frames - 1);
    EXPECT_GE(track.size(), static_cast<std::size_t>(pair.frames - 4));
    for (const TrackPoint& p : track) EXPECT_FALSE(pair.Merged(p.frame)) << "blob in " << number;
  }
}

TEST(Tracker, DotsCrossingSlowlyEndTheirTracksRatherThanSwitch) {
  // Merged for 3 frames, then apart by 1 px more each frame: too close, for too long after
  // the bridged frames, to be told apart; the tracks end and new ones start.
  const CrossingPair pair{1.0, 140};
  for (const std::uint64_t seed : {17u, 18u, 19u, 20u, 21u}) {
    const std::vector<TrackPoint> points = pair.Track(TrackerOptions{}, seed);
    ExpectNoSwitch(pair, points, seed);
    for (const TrackPoint& p : points) EXPECT_FALSE(pair.Merged(p.frame)) << "seed " << seed;
  }
}

TEST(Tracker, DotsMergedForLongNeverSwitch) {
  // Merged for 27 frames: the bridged tracks end; the blob starts a track of its own.
  const CrossingPair pair{0.15, 140};
  for (const std::uint64_t seed : {22u, 23u, 24u, 25u, 26u}) {
    ExpectNoSwitch(pair, pair.Track(TrackerOptions{}, seed), seed);
  }
}

TEST(Tracker, SkippedFrameNumberDoesNotBreakTracks) {
  const Simulation& sim = PlanarSpinFlight();
  Feed feed;
  feed.skipped_frames = {120};
  const auto tracks = ByTrack(Track(sim, TrackerOptions{}, feed, 20));
  ASSERT_EQ(tracks.size(), 6u);
  for (const auto& [number, track] : tracks) {
    EXPECT_NE(MarkerOfTrack(sim, track), 0) << "track " << number;
    EXPECT_EQ(track.size(), sim.frames.size() - 1);
  }
}

TEST(Tracker, SearchRegionsHoldTheNextTruePositions) {
  const Simulation& sim = PlanarSpinFlight();
  int frames = 0;
  int regions_given = 0;
  int regions_missing_a_marker = 0;
  Feed feed;
  feed.on_regions = [&](int frame, const std::vector<cv::Rect>& regions) {
    ++frames;
    if (frame == 0) EXPECT_TRUE(regions.empty()) << "nothing is tracked before the first frame";
    if (frame % 10 == 0) EXPECT_TRUE(regions.empty()) << "frame " << frame;
    if (regions.empty()) return;
    ++regions_given;
    for (const MarkerTruth& m : sim.frames[frame].markers) {
      const cv::Point pixel(static_cast<int>(std::lround(m.pixel.x())),
                            static_cast<int>(std::lround(m.pixel.y())));
      bool inside = false;
      for (const cv::Rect& r : regions) {
        EXPECT_TRUE((r & cv::Rect(0, 0, kImageSize.width, kImageSize.height)) == r);
        inside = inside || r.contains(pixel);
      }
      regions_missing_a_marker += !inside;
    }
  };
  Track(sim, TrackerOptions{}, feed, 21);
  EXPECT_GE(regions_given, frames * 8 / 10);
  EXPECT_EQ(regions_missing_a_marker, 0);
}

TEST(Tracker, SearchTheWholeFrameAfterATrackEnds) {
  TrackerOptions options;
  options.max_gap_frames = 2;
  Tracker tracker(options);
  const auto dots = [](int t) {
    return std::vector<Detection>{DetectionAt({100.0 + 2 * t, 100.0}), DetectionAt({300.0, 200.0 + t})};
  };
  tracker.Add(1, 0.001, dots(1));
  EXPECT_TRUE(tracker.SearchRegions(2, kImageSize).empty());  // new tracks were started at 1
  for (int t = 2; t <= 5; ++t) tracker.Add(t, t * 1e-3, dots(t));
  const std::vector<cv::Rect> regions = tracker.SearchRegions(6, kImageSize);
  ASSERT_EQ(regions.size(), 2u);
  EXPECT_TRUE(regions[0].contains(cv::Point(112, 100)));
  EXPECT_TRUE(regions[1].contains(cv::Point(300, 206)));
  // The second dot vanishes: its track ends after frame 8, and frame 9 searches everything.
  for (int t = 6; t <= 8; ++t) tracker.Add(t, t * 1e-3, {dots(t)[0]});
  EXPECT_EQ(tracker.live_tracks(), 1);
  EXPECT_TRUE(tracker.SearchRegions(9, kImageSize).empty());
  tracker.Add(9, 9e-3, {dots(9)[0]});
  EXPECT_EQ(tracker.SearchRegions(11, kImageSize).size(), 1u);
  // Frame numbers jump past max_gap_frames: the track ends unseen, so search everything.
  EXPECT_TRUE(tracker.SearchRegions(13, kImageSize).empty());
  tracker.Add(13, 13e-3, {});
  EXPECT_EQ(tracker.live_tracks(), 0);
}

TEST(Tracker, EndedTracksNeverReviveAndShortTracksAreDropped) {
  Tracker tracker(TrackerOptions{});
  // A dot seen for 5 frames (below min_track_points), gone for 10, back at the same place.
  int frame = 0;
  for (; frame < 5; ++frame) tracker.Add(frame, frame * 1e-3, {DetectionAt({50.0, 60.0})});
  for (; frame < 15; ++frame) tracker.Add(frame, frame * 1e-3, {});
  EXPECT_EQ(tracker.live_tracks(), 0);
  EXPECT_TRUE(tracker.Finish().empty());
  for (; frame < 25; ++frame) tracker.Add(frame, frame * 1e-3, {DetectionAt({50.0, 60.0})});
  EXPECT_EQ(tracker.live_tracks(), 1);
  const auto tracks = ByTrack(tracker.Finish());
  ASSERT_EQ(tracks.size(), 1u);
  EXPECT_EQ(tracks.begin()->first, 1);
  EXPECT_EQ(tracks.begin()->second.size(), 10u);
  EXPECT_EQ(tracks.begin()->second.front().frame, 15);
}

TEST(Tracker, AGlintBesideADotMakesTheTrackMissRatherThanGuess) {
  Tracker tracker(TrackerOptions{});
  int frame = 0;
  for (; frame < 10; ++frame) tracker.Add(frame, 0.0, {DetectionAt({100.0 + frame, 100.0})});
  // Two candidates 1 px either side of the prediction: ambiguous, neither is taken and
  // neither starts a track.
  tracker.Add(frame, 0.0, {DetectionAt({109.0, 100.0}), DetectionAt({111.0, 100.0})});
  EXPECT_EQ(tracker.live_tracks(), 1);
  ++frame;
  tracker.Add(frame, 0.0, {DetectionAt({111.0, 100.0})});
  const std::vector<TrackPoint> points = tracker.Finish();
  ASSERT_EQ(points.size(), 11u);
  EXPECT_EQ(points.back().frame, 11);
  EXPECT_EQ(points.back().x_px, 111.0);
}

// Three frames of two still dots, so that both tracks are established.
Tracker TwoStillDots(const Eigen::Vector2d& a, const Eigen::Vector2d& b, double gate_px) {
  TrackerOptions options;
  options.gate_px = gate_px;
  options.min_track_points = 1;
  Tracker tracker(options);
  for (int frame = 0; frame < 3; ++frame) tracker.Add(frame, 0.0, {DetectionAt(a), DetectionAt(b)});
  return tracker;
}

TEST(Tracker, TwoTracksWithOnlyOneDetectionBetweenThemBothMiss) {
  Tracker tracker = TwoStillDots({100, 100}, {103, 100}, 6.0);
  tracker.Add(3, 0.0, {DetectionAt({101.5, 100})});  // the dots merged
  EXPECT_EQ(tracker.live_tracks(), 2);              // neither took it, and it started nothing
  tracker.Add(4, 0.0, {DetectionAt({100, 100}), DetectionAt({103, 100})});
  const auto tracks = ByTrack(tracker.Finish());
  ASSERT_EQ(tracks.size(), 2u);
  for (const auto& [number, track] : tracks) {
    for (const TrackPoint& p : track) EXPECT_NE(p.frame, 3) << "track " << number;
  }
}

TEST(Tracker, ASecondDetectionExplainsOneOfTwoClaimants) {
  // Track 1 at (0, 0) has two candidates; track 2 at (9, 0) only the one nearest to both.
  // Taking the nearest for track 1 would leave track 2 without: the assignment is global.
  Tracker tracker = TwoStillDots({0, 0}, {9, 0}, 10.0);
  tracker.Add(3, 0.0, {DetectionAt({4, 0}), DetectionAt({-6.5, 0})});
  const std::vector<TrackPoint> points = tracker.Finish();
  ASSERT_EQ(points.size(), 8u);
  EXPECT_EQ(points[6].track, 1);
  EXPECT_EQ(points[6].x_px, -6.5);
  EXPECT_EQ(points[7].track, 2);
  EXPECT_EQ(points[7].x_px, 4.0);
}

// A sphere of outline radius 6 px moving right; in frames 12-14 the body's outline hides
// part of it: its fitted radius (outline-fitted) or its blob's (too small for an outline)
// falls. Those points stay in the track, with quality 0; the radii around them do not
// move the track's median.
TEST(Tracker, DetectionsSmallerThanTheirTrackAreKeptWithQualityZero) {
  Tracker tracker{TrackerOptions{}};
  for (int f = 0; f < 20; ++f) {
    Detection d = DetectionAt(Eigen::Vector2d(100.0 + 2.0 * f, 200.0));
    d.outline_fitted = true;
    d.radius_px = 6.0 + 0.1 * std::sin(f);  // the fit's scatter
    d.sigma_px = 0.02;
    if (f == 12) d.radius_px = 4.5;         // 0.75 of the median
    if (f == 13) {                          // mostly hidden: its centroid
      d.outline_fitted = false;
      d.radius_px = 2.8;
    }
    if (f == 14) d.radius_px = 5.2;         // 0.87: kept
    tracker.Add(f, f / 1000.0, {d});
  }
  const std::vector<TrackPoint> points = tracker.Finish();
  ASSERT_EQ(points.size(), 20u);
  for (const TrackPoint& p : points) {
    EXPECT_EQ(p.track, 1);
    EXPECT_EQ(p.quality == 0.0, p.frame == 12 || p.frame == 13) << p.frame;
    EXPECT_EQ(p.sigma_px, 0.02);
  }
  // Without outline radii (small dots) nothing is marked, whatever the area.
  Tracker dots{TrackerOptions{}};
  for (int f = 0; f < 10; ++f) {
    Detection d = DetectionAt(Eigen::Vector2d(100.0 + 2.0 * f, 200.0));
    d.radius_px = f == 5 ? 0.5 : 2.0;
    dots.Add(f, f / 1000.0, {d});
  }
  for (const TrackPoint& p : dots.Finish()) EXPECT_GT(p.quality, 0.0);
}

TEST(Tracker, BadOptionsAreRefused) {
  const auto refused = [](const std::function<void(TrackerOptions&)>& change) {
    TrackerOptions options;
    change(options);
    EXPECT_FALSE(options.Validate().empty());
    EXPECT_THROW(Tracker{options}, InputError);
  };
  refused([](TrackerOptions& o) { o.gate_px = 0.0; });
  refused([](TrackerOptions& o) { o.gate_px = std::numeric_limits<double>::quiet_NaN(); });
  refused([](TrackerOptions& o) { o.gate_px = std::numeric_limits<double>::infinity(); });
  refused([](TrackerOptions& o) { o.ambiguity_ratio = 0.9; });
  refused([](TrackerOptions& o) { o.max_gap_frames = -1; });
  refused([](TrackerOptions& o) { o.min_track_points = 0; });
  refused([](TrackerOptions& o) { o.search_margin_px = -1.0; });
  refused([](TrackerOptions& o) { o.min_radius_of_track = 1.5; });
  refused([](TrackerOptions& o) { o.radius_history = 0; });
  EXPECT_TRUE(TrackerOptions{}.Validate().empty());
}

TEST(Tracker, FramesOutOfOrderAndNonFiniteDetectionsAreRefused) {
  Tracker tracker(TrackerOptions{});
  tracker.Add(5, 0.005, {DetectionAt({10.0, 10.0})});
  EXPECT_THROW(tracker.Add(5, 0.005, {}), InputError);
  EXPECT_THROW(tracker.Add(4, 0.004, {}), InputError);
  EXPECT_THROW(tracker.Add(6, 0.006, {DetectionAt({std::nan(""), 10.0})}), InputError);
}

}  // namespace
}  // namespace tumbletrace
