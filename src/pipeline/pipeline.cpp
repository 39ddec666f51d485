#include "tumbletrace/pipeline/pipeline.hpp"

#include <fmt/format.h>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {

FitOptions FitOptionsFor(const Session& session) {
  FitOptions options;
  const std::optional<Eigen::Vector3d> g = session.gravity.WorldVector();
  if (!g || !session.camera.camera_from_world) {
    throw InputError(fmt::format(
        "{}: the fit needs gravity as a world vector (gravity_mps2: [x, y, z] or gravity: "
        "{{latitude_deg, elevation_m}}) and a camera with world_to_camera; estimating the "
        "direction of gravity from the flight is not available yet",
        session.file.string()));
  }
  options.gravity_world_mps2 = *g;
  options.first_frame = session.first_frame;
  options.last_frame = session.last_frame;
  return options;
}

TrackingResult TrackClip(const Session& session, const TrackingOptions& options,
                         const Progress& progress) {
  DetectorOptions detector_options = options.detector;
  detector_options.dark_dots = session.markers.kind == MarkerKind::kDarkDots;
  if (session.markers.threshold) detector_options.threshold = session.markers.threshold;
  detector_options.min_area_px = session.markers.min_area_px;
  detector_options.max_area_px = session.markers.max_area_px;
  if (session.markers.background_radius_px) {
    detector_options.background_radius_px = *session.markers.background_radius_px;
  }
  MarkerDetector detector(detector_options);
  Tracker tracker(options.tracker);

  std::unique_ptr<FrameSource> source = OpenClip(session.clip, session.first_frame, session.last_frame);
  TrackingResult result;
  result.clip = source->info();
  const int expected = result.clip.frame_count;
  Frame frame;
  while (source->Next(&frame)) {
    const double time_s = frame.index / session.capture_fps;
    const std::vector<cv::Rect> regions = tracker.SearchRegions(frame.index, frame.image.size());
    const std::vector<Detection> detections = detector.Detect(frame.image, regions);
    result.detections += static_cast<int>(detections.size());
    tracker.Add(frame.index, time_s, detections);
    ++result.frames_read;
    if (progress) progress(result.frames_read, expected);
  }
  result.clip = source->info();  // complete now (missing frames, last index)
  result.warnings = ClipWarnings(result.clip, session.capture_fps);
  if (result.frames_read == 0) {
    throw DataError(fmt::format("{}: no frames in the requested range", session.clip.string()));
  }
  result.points = tracker.Finish();
  if (result.points.empty()) {
    throw DataError(fmt::format(
        "{}: no marker tracks found in {} frames ({} detections): check `markers` in the "
        "session (bright-dots or dark-dots, threshold, min_area_px, max_area_px)",
        session.clip.string(), result.frames_read, result.detections));
  }
  result.identification = IdentifyTracks(&result.points, session.body, session.camera, options.identify);
  for (const std::string& w : result.identification.warnings) result.warnings.push_back(w);
  return result;
}

Analysis AnalyzeSession(const Session& session, const TrackingOptions& tracking,
                        const FitOptions& fit, const Progress& progress) {
  Analysis analysis;
  analysis.tracking = TrackClip(session, tracking, progress);
  analysis.fit = FitFreeFlight(GroupByFrame(analysis.tracking.points, session.capture_fps),
                               session.body, session.camera, fit);
  for (const std::string& w : analysis.tracking.warnings) analysis.fit.warnings.push_back(w);
  analysis.summary = Summarise(analysis.fit, session.body);
  return analysis;
}

}  // namespace tumbletrace
