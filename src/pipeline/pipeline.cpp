#include "tumbletrace/pipeline/pipeline.hpp"

#include <fmt/format.h>

#include <map>

#include <memory>
#include <optional>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/detect/background_radius.hpp"
#include "tumbletrace/identify/sighting_size.hpp"

namespace tumbletrace {
namespace {

DetectorOptions DetectorOptionsFor(const Session& session, const DetectorOptions& defaults) {
  DetectorOptions options = defaults;
  options.dark_dots = session.markers.kind == MarkerKind::kDarkDots;
  if (session.markers.threshold) options.threshold = session.markers.threshold;
  options.min_area_px = session.markers.min_area_px;
  options.max_area_px = session.markers.max_area_px;
  if (session.markers.background_radius_px) {
    options.background_radius_px = *session.markers.background_radius_px;
  }
  return options;
}

// Detects, tracks and identifies the markers of one camera's clip; its points carry the
// camera's index. `progress` is called after each frame with the frames read in this clip.
CameraTracking TrackCamera(const Session& session, int camera_index, FrameSource* source,
                           const TrackingOptions& options, std::vector<TrackPoint>* points,
                           const std::function<void(int)>& progress) {
  const SessionCamera& camera = session.cameras[camera_index];
  DetectorOptions detector_options = DetectorOptionsFor(session, options.detector);
  std::optional<MarkerDetector> detector;
  Tracker tracker(options.tracker);
  CameraTracking result;
  result.name = camera.name;
  Frame frame;
  while (source->Next(&frame)) {
    if (!detector) {
      // The background filter's radius from the markers' size in the first frame, unless
      // the session gives it.
      if (!session.markers.background_radius_px) {
        detector_options.background_radius_px =
            ChooseBackgroundRadius(frame.image, detector_options).radius_px;
      }
      result.background_radius_px = detector_options.background_radius_px;
      detector.emplace(detector_options);
    }
    const double time_s = frame.index / camera.capture_fps;
    const std::vector<cv::Rect> regions = tracker.SearchRegions(frame.index, frame.image.size());
    const std::vector<Detection> detections = detector->Detect(frame.image, regions);
    result.detections += static_cast<int>(detections.size());
    tracker.Add(frame.index, time_s, detections);
    ++result.frames_read;
    if (progress) progress(result.frames_read);
  }
  result.clip = source->info();  // complete now (missing frames, last index)
  if (result.frames_read == 0) {
    throw DataError(fmt::format("{}: no frames in the requested range", camera.clip.string()));
  }
  std::vector<TrackPoint> found = tracker.Finish();
  if (found.empty()) {
    throw DataError(fmt::format(
        "{}: no marker tracks found in {} frames ({} detections): check `markers` in the "
        "session (bright-dots or dark-dots, threshold, min_area_px, max_area_px)",
        camera.clip.string(), result.frames_read, result.detections));
  }
  try {
    result.identification = IdentifyTracks(&found, session.body, camera.camera, options.identify);
  } catch (const DataError& e) {
    if (session.cameras.size() == 1) throw;
    throw DataError(fmt::format("{} ({}): {}", camera.name, camera.clip.string(), e.what()));
  }
  for (TrackPoint& p : found) p.camera = camera_index;
  result.off_size = MarkOffSizeSightings(&found, session.body).marked;
  points->insert(points->end(), found.begin(), found.end());
  return result;
}

}  // namespace

FitOptions FitOptionsFor(const Session& session) {
  FitOptions options;
  const std::optional<Eigen::Vector3d> g = session.gravity.WorldVector();
  // Only the first camera may lack a pose: its frame is then the world frame, the other
  // cameras' poses are relative to it, and gravity's direction must come from the flight.
  for (size_t k = 1; k < session.cameras.size(); ++k) {
    const SessionCamera& camera = session.cameras[k];
    if (!camera.camera.camera_from_world) {
      throw InputError(fmt::format(
          "{}: camera '{}' ({}): world_to_camera is missing; every camera but the first needs "
          "it (without the first camera's pose, the world frame is that camera's frame and the "
          "others' poses are relative to it)",
          session.file.string(), camera.name, camera.camera_file.string()));
    }
  }
  const SessionCamera& first = session.cameras.front();
  if (!first.camera.camera_from_world && g) {
    throw InputError(fmt::format(
        "{}: camera '{}' ({}) has no world_to_camera, so there is no world frame to give "
        "gravity's direction in (gravity_mps2: [x, y, z], gravity: {{latitude_deg, ..}}, or "
        "the default [0, 0, -9.80665] when neither is given); expected gravity as a magnitude "
        "(gravity_mps2: 9.81), whose direction the fit then estimates",
        session.file.string(), first.name, first.camera_file.string()));
  }
  if (g) {
    options.gravity_world_mps2 = *g;
  } else {
    // Only the magnitude is given: the direction is estimated from the flight (the start:
    // straight down the image, refined by the initialisation).
    options.gravity_mode = GravityMode::kDirection;
    options.gravity_world_mps2 = Eigen::Vector3d(0, session.gravity.Magnitude(), 0);
  }
  options.noise_model.min_offset_sigma_px = session.markers.centre_offset_px;
  options.first_frame = session.first_frame;
  options.last_frame = session.last_frame;
  options.time_offsets_s = session.TimeOffsets();
  options.estimate_time_offsets = session.estimate_time_offsets;
  options.wind_world_mps = session.wind_world_mps;
  const std::map<std::string, DragChoice> drags = {{"auto", DragChoice::kAuto},
                                                    {"none", DragChoice::kNone},
                                                    {"quadratic", DragChoice::kQuadratic},
                                                    {"quadratic+lift", DragChoice::kQuadraticLift}};
  options.drag = drags.at(session.drag);
  if (session.estimate_gravity) options.gravity_mode = GravityMode::kEstimate;
  return options;
}

FlightAnalysis FitSession(const std::vector<FrameSightings>& frames, const Session& session,
                          FitOptions options, bool search_window) {
  FlightAnalysis out;
  const std::vector<Camera> cameras = session.CameraModels();
  if (search_window && !options.first_frame && !options.last_frame) {
    out.window = FindFreeFlightWindow(frames, session.body, cameras, options);
    options.first_frame = out.window.start.frame;
    options.last_frame = out.window.end.frame;
  }
  out.fit = FitFreeFlight(frames, session.body, cameras, options);
  if (!out.window.detected) {
    out.window.start.frame = out.fit.first_frame;
    out.window.end.frame = out.fit.last_frame;
    out.window.criterion = options.first_frame || options.last_frame
                               ? "given (the session's frames or --first-frame/--last-frame)"
                               : "every frame with markers (window: all)";
  }
  out.summary = Summarise(out.fit, session.body, session.air);
  DiagnoseOptions diagnose;
  diagnose.expected_gravity_mps2 = options.gravity_world_mps2;
  diagnose.check_gravity = options.gravity_mode == GravityMode::kEstimate;
  out.diagnostics = Diagnose(out.fit, out.window, session.body, cameras, diagnose);
  for (const BreakFlag& flag : out.diagnostics.flags) {
    if (flag.kind == "gravity" || flag.kind == "correlated-residuals" || flag.kind == "marker" ||
        flag.kind == "frames") {
      out.fit.warnings.push_back(flag.sentence);
    }
  }
  return out;
}

TrackingResult TrackClip(const Session& session, const TrackingOptions& options,
                         const Progress& progress) {
  // Every clip is opened first: a bad one is reported before any is read, and the progress
  // knows the total.
  std::vector<std::unique_ptr<FrameSource>> sources;
  int total = 0;
  for (const SessionCamera& camera : session.cameras) {
    sources.push_back(OpenClip(camera.clip, session.first_frame, session.last_frame));
    // The clip must be of the size the calibration describes (the sensor window's, when one
    // is given): another size means another read-out, whose principal point is not known.
    const cv::Size size = sources.back()->info().size;
    const CameraIntrinsics& k = camera.camera.intrinsics;
    if (size.width > 0 && (size.width != k.width_px || size.height != k.height_px)) {
      throw InputError(fmt::format(
          "{}: the clip's frames are {} x {} px, but the camera file {} describes {} x {} px{}; "
          "expected the same size (a cropped read-out needs sensor_window: {{offset_px: [x, y], "
          "size_px: [w, h]}} in the camera file or the session)",
          camera.clip.string(), size.width, size.height, camera.camera_file.string(), k.width_px,
          k.height_px, camera.camera.sensor_window ? " (its sensor window)" : ""));
    }
    const int count = sources.back()->info().frame_count;
    total = (total < 0 || count < 0) ? -1 : total + count;
  }
  TrackingResult result;
  const bool several = session.cameras.size() > 1;
  int done_before = 0;
  for (size_t k = 0; k < session.cameras.size(); ++k) {
    const auto camera_progress = [&](int done) {
      if (progress) progress(done_before + done, total);
    };
    CameraTracking tracking = TrackCamera(session, static_cast<int>(k), sources[k].get(), options,
                                          &result.points, camera_progress);
    std::vector<std::string> warnings = ClipWarnings(tracking.clip, session.cameras[k].capture_fps);
    for (const std::string& w : tracking.identification.warnings) warnings.push_back(w);
    for (const std::string& w : warnings) {
      result.warnings.push_back(several ? fmt::format("{}: {}", tracking.name, w) : w);
    }
    done_before += tracking.frames_read;
    sources[k].reset();  // the decoder's memory, before the next clip
    result.cameras.push_back(std::move(tracking));
  }
  return result;
}

Analysis AnalyzeSession(const Session& session, const TrackingOptions& tracking,
                        const FitOptions& fit, const Progress& progress) {
  Analysis analysis;
  analysis.tracking = TrackClip(session, tracking, progress);
  analysis.flight = FitSession(GroupByFrame(analysis.tracking.points, session.CaptureRates()),
                               session, fit, session.search_window);
  for (const std::string& w : analysis.tracking.warnings) analysis.flight.fit.warnings.push_back(w);
  return analysis;
}

}  // namespace tumbletrace
