// The chain of stages as the commands run it:
//   clip -> detect -> track -> identify  (TrackClip, the `track` command)
//   ... -> fit                          (AnalyzeSession, the `analyze` command)
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/detect/marker_detector.hpp"
#include "tumbletrace/diagnose/diagnostics.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/summary.hpp"
#include "tumbletrace/fit/window.hpp"
#include "tumbletrace/identify/identify.hpp"
#include "tumbletrace/model/session.hpp"
#include "tumbletrace/track/tracker.hpp"

namespace tumbletrace {

struct TrackingOptions {
  DetectorOptions detector;    // the session's `markers` settings are applied on top
  TrackerOptions tracker;
  IdentifyOptions identify;
};

// What tracking found in one camera's clip.
struct CameraTracking {
  std::string name;            // the session's name for the camera
  ClipInfo clip;
  IdentifyReport identification;
  int frames_read = 0;
  int detections = 0;
  int background_radius_px = 0;  // the detector's background filter (given, or chosen from
                                 // the markers' size in the first frame)
  int off_size = 0;  // identified sightings smaller or larger than their marker's image in
                     // that frame, set to quality 0 (identify/sighting_size.hpp)
};

struct TrackingResult {
  std::vector<TrackPoint> points;       // every camera's, identified where possible, each
                                        // with its camera's index; track ids are per camera
  std::vector<CameraTracking> cameras;  // in the session's order
  std::vector<std::string> warnings;    // prefixed with the camera's name when there are several
};

// Called with the number of frames processed and the number expected (-1: unknown), over
// all the cameras' clips.
using Progress = std::function<void(int done, int total)>;

// Reads each camera's clip frame by frame, detects the markers (near the tracker's
// predictions, the whole frame where needed), tracks and identifies them with that
// camera's calibration. Throws InputError for unreadable clips and DataError when a camera
// finds no markers or they cannot be identified (naming the clip).
TrackingResult TrackClip(const Session& session, const TrackingOptions& options,
                         const Progress& progress);

// The fit of one throw with what is derived from it.
struct FlightAnalysis {
  FreeFlightWindow window;   // found, or as given
  FitResult fit;
  FlightSummary summary;
  Diagnostics diagnostics;
};

// The window (searched for unless `options` gives one or `search_window` is false), the fit
// over it, its summary and the diagnostics; warnings of the diagnostics join the fit's.
FlightAnalysis FitSession(const std::vector<FrameSightings>& frames, const Session& session,
                          FitOptions options, bool search_window);

struct Analysis {
  TrackingResult tracking;
  FlightAnalysis flight;
};

// TrackClip, then FitSession over the identified tracks of every camera (each camera's
// frames timed by its own capture rate). Warnings of the tracking stages are added to the
// fit's.
Analysis AnalyzeSession(const Session& session, const TrackingOptions& tracking,
                        const FitOptions& fit, const Progress& progress);

// The fit options a session implies (gravity, window, the cameras' clock offsets and whether
// to estimate them). Gravity given as a magnitude: its direction is estimated
// (GravityMode::kDirection). Throws InputError, naming the camera file, for a camera other
// than the first without a pose, and for a first camera without a pose with gravity given as
// a world vector.
FitOptions FitOptionsFor(const Session& session);

}  // namespace tumbletrace
