// The chain of stages as the commands run it:
//   clip -> detect -> track -> identify  (TrackClip, the `track` command)
//   ... -> fit                          (AnalyzeSession, the `analyze` command)
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/detect/marker_detector.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/summary.hpp"
#include "tumbletrace/identify/identify.hpp"
#include "tumbletrace/model/session.hpp"
#include "tumbletrace/track/tracker.hpp"

namespace tumbletrace {

struct TrackingOptions {
  DetectorOptions detector;    // the session's `markers` settings are applied on top
  TrackerOptions tracker;
  IdentifyOptions identify;
};

struct TrackingResult {
  std::vector<TrackPoint> points;  // identified where possible
  ClipInfo clip;
  IdentifyReport identification;
  int frames_read = 0;
  int detections = 0;
  std::vector<std::string> warnings;
};

// Called with the number of frames processed and the number expected (-1: unknown).
using Progress = std::function<void(int done, int total)>;

// Reads the session's clip frame by frame, detects the markers (near the tracker's
// predictions, the whole frame where needed), tracks and identifies them. Throws
// InputError for unreadable clips and DataError when no markers are found or they cannot
// be identified.
TrackingResult TrackClip(const Session& session, const TrackingOptions& options,
                         const Progress& progress);

struct Analysis {
  TrackingResult tracking;
  FitResult fit;
  FlightSummary summary;
};

// TrackClip, then the free-flight fit of the identified tracks. Warnings of the tracking
// stages are added to the fit's.
Analysis AnalyzeSession(const Session& session, const TrackingOptions& tracking,
                        const FitOptions& fit, const Progress& progress);

// The fit options a session implies (gravity, window); throws InputError for a session the
// fit cannot take yet (gravity without direction, camera without pose).
FitOptions FitOptionsFor(const Session& session);

}  // namespace tumbletrace
