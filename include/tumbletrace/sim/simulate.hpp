// The simulator: a scenario becomes the truth (poses and exact marker pixels per frame),
// noisy tracks, and a rendered clip with the session, camera and body files that go with
// it (`tumbletrace simulate`).
#pragma once

#include <filesystem>
#include <functional>
#include <opencv2/core.hpp>
#include <vector>

#include "tumbletrace/model/mass_properties.hpp"
#include "tumbletrace/model/tracks.hpp"
#include "tumbletrace/sim/motion.hpp"
#include "tumbletrace/sim/scenario.hpp"

namespace tumbletrace {

struct MarkerTruth {
  int id = 0;
  int camera = 0;  // index in the scenario's FilmingCameras()
  Eigen::Vector2d pixel = Eigen::Vector2d::Zero();  // exact projection at the frame's exposure
  bool in_front = false;  // the centre is in front of the camera (`pixel` is its projection)
  bool visible = false;   // in the image and facing the camera (and, when the clip is ray
                          // cast with occlusion, not wholly hidden)
  // Of the marker's own image at the frame's time (sim/marker_image.hpp): the part in the
  // frame and not hidden, and the part of that in a cast shadow. The flat clip hides and
  // shadows nothing.
  double visible_fraction = 0.0;
  double shadowed_fraction = 0.0;
};

struct FrameTruth {
  int frame = 0;
  double time_s = 0.0;  // world time i / capture_fps; camera k exposes it at + its offset
  RigidState state;     // at time_s
  std::vector<MarkerTruth> markers;  // camera by camera (camera 0 first), body marker order
};

struct Simulation {
  Scenario scenario;
  MassProperties mass;  // from the parts list: the true CM and inertia
  std::vector<FrameTruth> frames;
  std::vector<TrackPoint> tracks;  // exact + Gaussian noise, identified; track = marker id
                                   // (per camera), camera = the index in FilmingCameras()
};

// Integrates the motion and projects the markers; no files. Throws InputError when the
// body has no parts list (the truth needs a CM and an inertia tensor).
Simulation SimulateFlight(const Scenario& scenario);

// The state of the body at any time t_s (>= 0) of the simulated flight.
RigidState StateAt(const Simulation& sim, double t_s);

// Renders frame `frame` of camera `camera`'s simulated clip (8-bit grey, blur and noise as
// the scenario says), exactly as WriteSimulation writes it before compression.
cv::Mat RenderSimulatedFrame(const Simulation& sim, int frame, int camera = 0);

// Writes clip.mp4 (when the scenario asks for video), session.yaml, camera.yaml,
// body.yaml, truth.json, truth_sightings.csv (per camera, frame and marker in front of the
// camera: the exact pixel and the visible and shadowed fractions of its image) and
// tracks.csv into `dir` (created when missing). With several
// cameras, each has <name>.mp4 (or the folder <name>/) and <name>_camera.yaml, the session
// is in list form without the clock offsets, and tracks.csv has the camera column.
// `progress` (may be empty) is called with the number of frames rendered so far, over all
// the cameras.
void WriteSimulation(const Simulation& sim, const std::filesystem::path& dir,
                     const std::function<void(int done, int total)>& progress);

}  // namespace tumbletrace
