// A simulation scenario: a body with parts and markers, a camera, a launch state, a spin,
// the frame rate and count, the exposure and the noise. Read from YAML (strict, like every
// input file); the body and camera are files of the usual formats, named relative to the
// scenario file.
//
//   body: body.yaml              # must carry a parts list (mass, CM and inertia)
//   camera: camera.yaml          # must carry world_to_camera; or several synchronised cameras:
//   cameras:                     #   [{name: side, camera: side.yaml, time_offset_s: 0.0003}, ..]
//   capture_fps: 1000
//   frames: 250
//   exposure_s: 0.0002           # shutter time, centred on each frame time (0: no blur)
//   gravity_mps2: [0, 0, -9.80665]
//   launch:                      # the CM's state at frame 0 (t = 0)
//     position_m: [0, 0, 1.2]
//     velocity_mps: [3.5, 0, 2.0]
//     orientation: {axis: [0, 0, 1], angle_deg: 0}   # body to world
//   spin: {axis_body: principal-3, rate_rev_per_s: 6}   # or axis_body: [x, y, z];
//                                                       # or omega_body_radps: [x, y, z]
//   noise: {tracks_sigma_px: 0.2, image_sigma_levels: 2.0, seed: 1}
//   occlusions: [{marker: 3, first_frame: 100, last_frame: 119}]   # optional
//   glints_per_frame: 2                                             # optional
//   aero: {k_per_m: 0.02, k_lift: 0.001, wind_mps: [1, 0, 0]}     # optional: flight through air;
//         # or {cd: 0.47, density_kgpm3: 1.2}, with the body's aero_reference area and the
//         # parts' mass giving k = rho C_d A / (2 m)
//   hand: {release_time_s: 0.04, acceleration_mps2: [20, 0, 60],  # optional: held before
//          angular_acceleration_radps2: [0, 0, -300]}              # release; `launch` is then
//                                                                  # the state at release
//   impact: {time_s: 0.3, normal: [0, 0, 1], restitution: 0.5, spin_kept: 0.6}   # optional
//   video: {write: true, format: mp4, playback_fps: 30, exposure_samples: 8, supersampling: 4,
//           background_level: 40, body_level: 70, dot_level: 230}
//   render: {mode: flat, marker_kind: sphere, occlusion: true, shadows: true}   # optional:
//           # mode flat: silhouettes and flat dots (the default); raycast: every sample's
//           # ray meets the parts and markers (sim/raycast.hpp), lit by `light`, so that the
//           # body hides and shadows markers. marker_kind sphere (glossy) | flat (matte paint)
//           # | retro (retro-reflective, lit from the camera); occlusion: false draws the
//           # markers over everything; shadows: false lights every point (raycast only)
//   light: {towards_light_world: [-0.6, -0.5, 0.62], ambient: 0.25, diffuse: 0.75,   # optional
//           specular: 0.4, shininess: 40}                                           # (raycast)
#pragma once

#include <Eigen/Core>
#include <Eigen/Geometry>
#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/sim/shading.hpp"

namespace tumbletrace {

struct VideoSettings {
  bool write = true;
  bool image_folder = false;    // true: frames/frame_000000.png (lossless); false: clip.mp4
  double playback_fps = 30.0;   // the rate written into clip.mp4 (not the capture rate)
  int exposure_samples = 8;     // instants averaged over the exposure when exposure_s > 0
  int supersampling = 4;
  double background_level = 40.0;
  double body_level = 70.0;
  double dot_level = 230.0;
};

enum class RenderMode {
  kFlat,     // silhouettes at one grey level, markers as flat ellipses over them (render.hpp)
  kRaycast,  // rays against the parts and markers, shaded, with shadows (raycast.hpp)
};

// How the clip is drawn (`render:`).
struct ScenarioRender {
  RenderMode mode = RenderMode::kFlat;
  MarkerMaterial marker_kind = MarkerMaterial::kGlossy;  // what the markers are made of (raycast)
  bool occlusion = true;  // raycast: the body and nearer markers hide markers; false: never
  bool shadows = true;    // raycast: solids shadow each other; false: all lit
};

// A marker hidden from the camera over a range of frames (a hand, a shadow, the body).
struct Occlusion {
  int marker_id = 0;
  int first_frame = 0;
  int last_frame = 0;
};

// The air of a simulated flight: the model of fit/aero.hpp with these coefficients.
struct ScenarioAero {
  double k_per_m = 0.0;
  double k_lift = 0.0;
  Eigen::Vector3d wind_world_mps = Eigen::Vector3d::Zero();
  std::optional<double> cd;             // when k was given as C_d (with the density)
  std::optional<double> density_kgpm3;
};

// The hand before release: the body is pushed with this acceleration beyond gravity and
// turned with this angular acceleration (body frame) until release_time_s.
struct ScenarioHand {
  double release_time_s = 0.0;
  Eigen::Vector3d acceleration_mps2 = Eigen::Vector3d::Zero();
  Eigen::Vector3d angular_acceleration_body_radps2 = Eigen::Vector3d::Zero();
};

// A bounce at time_s off a plane with this normal: the normal velocity reverses and is
// scaled by the restitution, the spin is scaled by spin_kept.
struct ScenarioImpact {
  double time_s = 0.0;
  Eigen::Vector3d normal_world = Eigen::Vector3d::UnitZ();
  double restitution = 0.5;
  double spin_kept = 0.6;
};

// One of several cameras filming the throw. Its frame i is exposed at world time
// i / capture_fps + time_offset_s (its clock's true offset, which the fit should find).
struct ScenarioCamera {
  std::string name;  // names its files: <name>.mp4 or <name>/, <name>_camera.yaml
  std::filesystem::path camera_file;
  Camera camera;
  double time_offset_s = 0.0;
};

struct Scenario {
  std::filesystem::path file;
  std::filesystem::path body_file;
  std::filesystem::path camera_file;  // the single camera (`camera:`), when `cameras` is empty
  Body body;
  Camera camera;
  std::vector<ScenarioCamera> cameras;  // several cameras (`cameras:`); `camera` is then unused
  double capture_fps = 1000.0;
  int frames = 250;
  double exposure_s = 0.0;
  Eigen::Vector3d gravity_world_mps2 = {0, 0, -9.80665};
  Eigen::Vector3d launch_cm_world_m = Eigen::Vector3d::Zero();
  Eigen::Vector3d launch_velocity_world_mps = Eigen::Vector3d::Zero();
  Eigen::Quaterniond launch_world_from_body = Eigen::Quaterniond::Identity();
  Eigen::Vector3d launch_omega_body_radps = Eigen::Vector3d::Zero();
  double tracks_sigma_px = 0.0;      // Gaussian noise added to tracks.csv, px per axis
  double image_sigma_levels = 2.0;   // sensor noise of the rendered frames, grey levels
  std::uint64_t seed = 1;
  std::vector<Occlusion> occlusions;
  int glints_per_frame = 0;          // spurious small bright spots at random places per frame
  VideoSettings video;
  ScenarioRender render;
  Lighting light;                    // the ray caster's light (`light:`)
  ScenarioAero aero;
  std::optional<ScenarioHand> hand;
  std::optional<ScenarioImpact> impact;

  // The time of the launch state: the release when there is a hand phase, else 0.
  double LaunchTimeS() const { return hand ? hand->release_time_s : 0.0; }
  bool SeveralCameras() const { return !cameras.empty(); }
  // The cameras the simulator films with: `cameras`, or the single `camera` named "camera"
  // on the world clock.
  std::vector<ScenarioCamera> FilmingCameras() const;
};

// Throws InputError naming the file and key.
Scenario ReadScenarioYaml(const std::filesystem::path& path);

}  // namespace tumbletrace
