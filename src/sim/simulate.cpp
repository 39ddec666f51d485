#include "tumbletrace/sim/simulate.hpp"

#include <fmt/format.h>

#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>
#include <random>

#include "tumbletrace/clip/video_writer.hpp"
#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/model/session.hpp"
#include "tumbletrace/sim/flight_phases.hpp"
#include "tumbletrace/sim/marker_image.hpp"
#include "tumbletrace/sim/ray_scene.hpp"
#include "tumbletrace/sim/raycast.hpp"
#include "tumbletrace/sim/render.hpp"

namespace tumbletrace {
namespace {

Eigen::Vector3d MarkerWorld(const RigidState& state, const MassProperties& mass,
                            const Eigen::Vector3d& at_body_m) {
  return state.cm_world_m + state.world_from_body * (at_body_m - mass.cm_body_m);
}

// Pixel Jacobian d(u, v)/d(x_camera) by central differences of the full projection.
Eigen::Matrix<double, 2, 3> PixelJacobian(const CameraIntrinsics& k, const Eigen::Vector3d& x) {
  Eigen::Matrix<double, 2, 3> j;
  const double h = 1e-6 * std::max(1.0, x.norm());
  for (int c = 0; c < 3; ++c) {
    Eigen::Vector3d xp = x, xm = x;
    xp[c] += h;
    xm[c] -= h;
    Eigen::Vector2d up, um;
    ProjectCameraPoint(k, xp.data(), up.data());
    ProjectCameraPoint(k, xm.data(), um.data());
    j.col(c) = (up - um) / (2 * h);
  }
  return j;
}

// A marker as the camera sees it at one instant; false when hidden or out of view.
bool ProjectMarker(const Camera& camera, const RigidState& state, const MassProperties& mass,
                   const Marker& marker, Eigen::Vector2d* pixel, RenderedDot* dot) {
  const RigidTransform& cfw = *camera.camera_from_world;
  const Eigen::Vector3d x_cam = cfw.Apply(MarkerWorld(state, mass, marker.at_body_m));
  if (x_cam.z() <= 0) return false;
  ProjectCameraPoint(camera.intrinsics, x_cam.data(), pixel->data());
  const Eigen::Vector3d to_camera = -x_cam.normalized();
  Eigen::Vector3d normal_cam = to_camera;  // a spherical marker faces the camera
  if (marker.normal_body) {
    normal_cam = cfw.rotation * (state.world_from_body * *marker.normal_body);
    // Dots seen at grazing angles are neither rendered nor tracked.
    if (normal_cam.dot(to_camera) < 0.15) return false;
  }
  const double radius_m = 0.5 * marker.diameter_m;
  const Eigen::Matrix<double, 2, 3> j = PixelJacobian(camera.intrinsics, x_cam);
  // The image of a flat disc of radius rho with normal n: S = rho^2 J (E - n n^T) J^T.
  dot->center_px = *pixel;
  dot->shape_px2 =
      radius_m * radius_m * j * (Eigen::Matrix3d::Identity() - normal_cam * normal_cam.transpose()) *
      j.transpose();
  dot->intensity = 1.0;
  const double margin_px = std::sqrt(dot->shape_px2.trace());
  const auto& k = camera.intrinsics;
  return pixel->x() >= margin_px && pixel->y() >= margin_px &&
         pixel->x() <= k.width_px - 1 - margin_px && pixel->y() <= k.height_px - 1 - margin_px;
}

// Surface samples of a part in the body frame, for its silhouette (convex hull).
std::vector<Eigen::Vector3d> PartSamples(const Part& part) {
  std::vector<Eigen::Vector3d> pts;
  constexpr int kRing = 24;
  switch (part.shape) {
    case PartShape::kCylinder: {
      const Eigen::Vector3d a = part.axis_body.normalized();
      const Eigen::Vector3d u = a.unitOrthogonal(), v = a.cross(u);
      const double r = 0.5 * part.diameter_m;
      for (int end = 0; end < 2; ++end) {
        const Eigen::Vector3d c = part.from_body_m + end * part.length_m * a;
        for (int i = 0; i < kRing; ++i) {
          const double phi = 2 * M_PI * i / kRing;
          pts.push_back(c + r * (std::cos(phi) * u + std::sin(phi) * v));
        }
      }
      break;
    }
    case PartShape::kBox:
      for (int i = 0; i < 8; ++i) {
        const Eigen::Vector3d sign((i & 1) ? 0.5 : -0.5, (i & 2) ? 0.5 : -0.5, (i & 4) ? 0.5 : -0.5);
        pts.push_back(part.center_body_m + sign.cwiseProduct(part.size_m));
      }
      break;
    case PartShape::kSphere:
      for (int i = 0; i < kRing; ++i) {
        for (int j = 1; j < kRing / 2; ++j) {
          const double phi = 2 * M_PI * i / kRing, theta = M_PI * j / (kRing / 2);
          pts.push_back(part.center_body_m +
                        0.5 * part.diameter_m *
                            Eigen::Vector3d(std::sin(theta) * std::cos(phi),
                                            std::sin(theta) * std::sin(phi), std::cos(theta)));
        }
      }
      break;
    case PartShape::kPointMass:
      break;
  }
  return pts;
}

bool Occluded(const Scenario& s, int marker_id, int frame) {
  for (const Occlusion& o : s.occlusions) {
    if (o.marker_id == marker_id && frame >= o.first_frame && frame <= o.last_frame) return true;
  }
  return false;
}

// Seeds of the per-frame randomness (glints, sensor noise) differ between cameras; the first
// camera's are those of a single-camera scenario.
std::uint64_t CameraSeed(std::uint64_t frame_seed, int camera_index) {
  return frame_seed ^ (static_cast<std::uint64_t>(camera_index) * 0x9E3779B97F4A7C15ULL);
}

// Glints: small bright spots at random places, new ones every frame (a fixed seed per frame,
// so that every instant of the exposure shows the same ones).
std::vector<RenderedDot> Glints(const Scenario& s, const Camera& camera, int camera_index, int frame) {
  std::mt19937_64 rng(
      CameraSeed(s.seed * 7919ULL + static_cast<std::uint64_t>(frame), camera_index));
  std::uniform_real_distribution<double> x(20.0, camera.intrinsics.width_px - 20.0);
  std::uniform_real_distribution<double> y(20.0, camera.intrinsics.height_px - 20.0);
  std::uniform_real_distribution<double> r(1.0, 2.5);
  std::vector<RenderedDot> glints;
  for (int g = 0; g < s.glints_per_frame; ++g) {
    RenderedDot glint;
    glint.center_px = {x(rng), y(rng)};
    const double radius = r(rng);
    glint.shape_px2 = radius * radius * Eigen::Matrix2d::Identity();
    glint.intensity = 1.0;
    glints.push_back(glint);
  }
  return glints;
}

// The scene as `camera` (number `camera_index`) sees it with the body in `state`.
SceneInstant ProjectScene(const Simulation& sim, const Camera& camera, int camera_index,
                          const RigidState& state, int frame) {
  const Scenario& s = sim.scenario;
  SceneInstant scene;
  for (const Part& part : s.body.parts) {
    std::vector<cv::Point2f> projected;
    bool in_front = true;
    for (const Eigen::Vector3d& p : PartSamples(part)) {
      const Eigen::Vector3d x_cam = camera.camera_from_world->Apply(MarkerWorld(state, sim.mass, p));
      Eigen::Vector2d px;
      if (!ProjectCameraPoint(camera.intrinsics, x_cam.data(), px.data())) {
        in_front = false;
        break;
      }
      projected.emplace_back(px.x(), px.y());
    }
    if (!in_front || projected.size() < 3) continue;
    std::vector<cv::Point2f> hull;
    cv::convexHull(projected, hull);
    std::vector<Eigen::Vector2d> polygon;
    for (const auto& p : hull) polygon.emplace_back(p.x, p.y);
    scene.silhouette_polygons_px.push_back(std::move(polygon));
  }
  for (const Marker& m : s.body.markers) {
    Eigen::Vector2d px;
    RenderedDot dot;
    if (Occluded(s, m.id, frame)) continue;
    if (ProjectMarker(camera, state, sim.mass, m, &px, &dot)) scene.dots.push_back(dot);
  }
  for (const RenderedDot& glint : Glints(s, camera, camera_index, frame)) scene.dots.push_back(glint);
  return scene;
}

// The markers the scenario's occlusions hide in `frame`, in the body's order.
std::vector<bool> LeftOut(const Scenario& s, int frame) {
  std::vector<bool> left_out;
  for (const Marker& m : s.body.markers) left_out.push_back(Occluded(s, m.id, frame));
  return left_out;
}

// The solids as `camera` (number `camera_index`) sees them with the body in `state`, with
// the frame's glints over them.
RayScene RayInstant(const Simulation& sim, const Camera& camera, int camera_index,
                    const RigidState& state, int frame) {
  const Scenario& s = sim.scenario;
  RayScene scene = BodyRayScene(s.body, sim.mass.cm_body_m, state, *camera.camera_from_world,
                                s.render.marker_kind, s.light.towards_light_world, LeftOut(s, frame));
  scene.overlay_dots = Glints(s, camera, camera_index, frame);
  return scene;
}

// The fractions of a marker's image in the flat clip, which hides and shadows nothing: all of
// a tracked marker's image is in the frame (ProjectMarker keeps a margin); a marker hidden by
// an occlusion, behind the camera or turned away is not drawn; one near the border is
// sampled alone for the part in the frame.
MarkerImageFractions FlatFractions(const Camera& camera, const RigidState& state,
                                   const MassProperties& mass, const Marker& marker,
                                   const MarkerTruth& truth, bool occluded) {
  if (occluded || !truth.in_front) return {};
  if (truth.visible) return {1.0, 0.0};
  const RigidTransform& cfw = *camera.camera_from_world;
  const Eigen::Vector3d x_cam = cfw.Apply(MarkerWorld(state, mass, marker.at_body_m));
  if (marker.normal_body) {
    const Eigen::Vector3d normal_cam = cfw.rotation * (state.world_from_body * *marker.normal_body);
    if (normal_cam.dot(-x_cam.normalized()) < 0.15) return {};
  }
  RayScene alone;
  alone.towards_light_camera = Eigen::Vector3d::UnitZ();
  SceneSolid solid;
  const Eigen::Matrix3d camera_from_body = cfw.rotation * state.world_from_body.toRotationMatrix();
  solid.primitive = MarkerSolid(marker, camera_from_body, x_cam - camera_from_body * marker.at_body_m);
  solid.surface = SurfaceKind::kMatteMarker;
  solid.marker = 0;
  alone.solids.push_back(solid);
  return SampleMarkerImage(alone, 0, camera.intrinsics, {false, false, 24});
}

// The fractions of marker `index`'s image in a ray-cast clip at one instant.
MarkerImageFractions SightingFractions(const Scenario& s, const RayScene& scene, int index,
                                       const Camera& camera) {
  const int solid = MarkerSolidIndex(scene, index);
  if (solid < 0) return {};
  return SampleMarkerImage(scene, solid, camera.intrinsics,
                           {s.render.occlusion, s.render.shadows, 24});
}

nlohmann::json Vec(const Eigen::Vector3d& v) { return {v.x(), v.y(), v.z()}; }

nlohmann::json TruthJson(const Simulation& sim) {
  const Scenario& s = sim.scenario;
  const RigidState launch = StateAt(sim, s.LaunchTimeS());
  const Eigen::Vector3d omega_world = launch.world_from_body * launch.omega_body_radps;
  nlohmann::json j;
  j["note"] = "Ground truth of a simulated throw (invented scenario).";
  j["scenario"] = s.file.filename().string();
  j["capture_fps"] = s.capture_fps;
  j["mass_kg"] = sim.mass.mass_kg;
  j["cm"]["body_m"] = Vec(sim.mass.cm_body_m);
  nlohmann::json inertia = nlohmann::json::array();
  for (int r = 0; r < 3; ++r) inertia.push_back(Vec(sim.mass.inertia_about_cm_kgm2.row(r)));
  j["inertia_about_cm_kgm2"] = inertia;
  j["gravity_mps2"] = Vec(s.gravity_world_mps2);
  j["launch"]["time_s"] = s.LaunchTimeS();
  j["launch"]["position_m"] = Vec(launch.cm_world_m);
  j["launch"]["velocity_mps"] = Vec(launch.velocity_world_mps);
  j["spin"]["omega_body_radps"] = Vec(launch.omega_body_radps);
  j["spin"]["omega_world_radps"] = Vec(omega_world);
  j["spin"]["rate_rev_per_s"] = launch.omega_body_radps.norm() / (2 * M_PI);
  j["tracks_sigma_px"] = s.tracks_sigma_px;
  // The free-flight frames: from the first at or after release to the last before impact.
  {
    const double dt = 1.0 / s.capture_fps;
    int first = 0, last = s.frames - 1;
    while (first < s.frames && first * dt < s.LaunchTimeS()) ++first;
    while (s.impact && last >= 0 && last * dt >= s.impact->time_s) --last;
    j["window"]["first_frame"] = first;
    j["window"]["last_frame"] = last;
    j["window"]["release_time_s"] = s.hand ? nlohmann::json(s.hand->release_time_s) : nlohmann::json();
    j["window"]["impact_time_s"] = s.impact ? nlohmann::json(s.impact->time_s) : nlohmann::json();
  }
  j["aero"]["k_per_m"] = s.aero.k_per_m;
  j["aero"]["k_lift"] = s.aero.k_lift;
  j["aero"]["wind_mps"] = Vec(s.aero.wind_world_mps);
  j["aero"]["cd"] = s.aero.cd ? nlohmann::json(*s.aero.cd) : nlohmann::json();
  j["aero"]["density_kgpm3"] =
      s.aero.density_kgpm3 ? nlohmann::json(*s.aero.density_kgpm3) : nlohmann::json();
  // Each camera's true clock offset, and that relative to the first camera's clock (what the
  // fit estimates).
  const std::vector<ScenarioCamera> cameras = s.FilmingCameras();
  nlohmann::json cameras_json = nlohmann::json::array();
  for (const ScenarioCamera& c : cameras) {
    const double from_first_s = c.time_offset_s - cameras.front().time_offset_s;
    cameras_json.push_back({{"name", c.name},
                            {"time_offset_s", c.time_offset_s},
                            {"time_offset_from_first_s", from_first_s}});
  }
  j["cameras"] = cameras_json;
  nlohmann::json frames = nlohmann::json::array();
  for (const FrameTruth& f : sim.frames) {
    nlohmann::json fj;
    fj["frame"] = f.frame;
    fj["time_s"] = f.time_s;
    fj["cm_world_m"] = Vec(f.state.cm_world_m);
    fj["velocity_world_mps"] = Vec(f.state.velocity_world_mps);
    const Eigen::Quaterniond& q = f.state.world_from_body;
    fj["q_world_from_body_wxyz"] = {q.w(), q.x(), q.y(), q.z()};
    fj["omega_body_radps"] = Vec(f.state.omega_body_radps);
    nlohmann::json markers = nlohmann::json::array();
    for (const MarkerTruth& m : f.markers) {
      markers.push_back({{"id", m.id}, {"camera", m.camera}, {"x_px", m.pixel.x()},
                         {"y_px", m.pixel.y()}, {"visible", m.visible}});
    }
    fj["markers"] = markers;
    frames.push_back(fj);
  }
  j["frames"] = frames;
  return j;
}

}  // namespace

Simulation SimulateFlight(const Scenario& scenario) {
  Simulation sim;
  sim.scenario = scenario;
  if (scenario.body.parts.empty()) {
    throw InputError(scenario.body_file.string() +
                     ": the simulator needs a parts list (mass, CM and inertia)");
  }
  sim.mass = CombineParts(scenario.body.parts);
  const FlightPhases phases(scenario, sim.mass);
  RigidState state;
  state.cm_world_m = scenario.launch_cm_world_m;
  state.velocity_world_mps = scenario.launch_velocity_world_mps;
  state.world_from_body = scenario.launch_world_from_body.normalized();
  state.omega_body_radps = scenario.launch_omega_body_radps;
  std::mt19937_64 rng(scenario.seed);
  std::normal_distribution<double> noise(0.0, 1.0);
  const double dt = 1.0 / scenario.capture_fps;
  const std::vector<ScenarioCamera> cameras = scenario.FilmingCameras();
  // The frames' states: from the launch (at release, when the hand holds the body first)
  // forwards, and backwards for the frames before it.
  const double t_launch = scenario.LaunchTimeS();
  std::vector<RigidState> states(scenario.frames);
  {
    RigidState s = state;
    double t = t_launch;
    for (int i = 0; i < scenario.frames; ++i) {
      if (i * dt < t_launch) continue;
      s = phases.Advance(s, t, i * dt);
      t = i * dt;
      states[i] = s;
    }
    s = state;
    t = t_launch;
    for (int i = scenario.frames - 1; i >= 0; --i) {
      if (i * dt >= t_launch) continue;
      s = phases.Advance(s, t, i * dt);
      t = i * dt;
      states[i] = s;
    }
  }
  for (int i = 0; i < scenario.frames; ++i) {
    state = states[i];
    FrameTruth f;
    f.frame = i;
    f.time_s = i * dt;
    f.state = state;
    for (int k = 0; k < static_cast<int>(cameras.size()); ++k) {
      // Camera k exposes its frame i at world time i dt + its clock offset.
      const double offset_s = cameras[k].time_offset_s;
      const RigidState seen =
          offset_s == 0.0 ? state : phases.Advance(state, f.time_s, f.time_s + offset_s);
      const Camera& camera = cameras[k].camera;
      const bool ray_cast = scenario.render.mode == RenderMode::kRaycast;
      const RayScene scene =
          ray_cast ? RayInstant(sim, camera, k, seen, i) : RayScene{};
      for (int index = 0; index < static_cast<int>(scenario.body.markers.size()); ++index) {
        const Marker& m = scenario.body.markers[index];
        MarkerTruth t;
        t.id = m.id;
        t.camera = k;
        RenderedDot dot;
        const bool occluded = Occluded(scenario, m.id, i);
        t.visible = ProjectMarker(camera, seen, sim.mass, m, &t.pixel, &dot) && !occluded;
        t.in_front = camera.camera_from_world->Apply(MarkerWorld(seen, sim.mass, m.at_body_m)).z() > 0;
        const MarkerImageFractions fractions =
            ray_cast ? SightingFractions(scenario, scene, index, camera)
                     : FlatFractions(camera, seen, sim.mass, m, t, occluded);
        t.visible_fraction = fractions.visible;
        t.shadowed_fraction = fractions.shadowed;
        // A marker the ray-cast clip hides wholly is not tracked.
        if (ray_cast && !(fractions.visible > 0.0)) t.visible = false;
        f.markers.push_back(t);
        if (!t.visible) continue;
        TrackPoint p;
        p.frame = i;
        p.time_s = f.time_s;  // the camera's own clock: i / capture_fps
        p.track = m.id;
        p.marker = m.id;
        p.x_px = t.pixel.x() + scenario.tracks_sigma_px * noise(rng);
        p.y_px = t.pixel.y() + scenario.tracks_sigma_px * noise(rng);
        p.quality = 1.0;
        p.camera = k;
        sim.tracks.push_back(p);
      }
    }
    sim.frames.push_back(std::move(f));
  }
  return sim;
}

RigidState StateAt(const Simulation& sim, double t_s) {
  const double fps = sim.scenario.capture_fps;
  const int k = std::clamp(static_cast<int>(std::floor(t_s * fps + 0.5)), 0,
                           static_cast<int>(sim.frames.size()) - 1);
  return FlightPhases(sim.scenario, sim.mass).Advance(sim.frames[k].state, sim.frames[k].time_s, t_s);
}

namespace {

// The body's states at the instants sampled inside frame `frame`'s exposure, which is centred
// on the frame's time on the camera's clock (offset `time_offset_s` from the world's).
std::vector<RigidState> ExposureStates(const Simulation& sim, int frame, double time_offset_s) {
  const Scenario& s = sim.scenario;
  const FlightPhases phases(s, sim.mass);
  const int samples = s.exposure_s > 0 ? s.video.exposure_samples : 1;
  const FrameTruth& f = sim.frames.at(frame);
  std::vector<RigidState> states;
  for (int j = 0; j < samples; ++j) {
    const double offset_s =
        time_offset_s + (samples > 1 ? s.exposure_s * ((j + 0.5) / samples - 0.5) : 0.0);
    states.push_back(phases.Advance(f.state, f.time_s, f.time_s + offset_s));
  }
  return states;
}

// The ray caster's settings: the flat renderer's levels, noise and seed, the scenario's light
// and switches.
RaycastSettings RaycastSettingsOf(const Scenario& s, const RenderSettings& flat) {
  RaycastSettings settings;
  settings.width_px = flat.width_px;
  settings.height_px = flat.height_px;
  settings.background_level = flat.background_level;
  settings.body_level = flat.body_level;
  settings.dot_level = flat.dot_level;
  settings.supersampling = flat.supersampling;
  settings.noise_sigma_levels = flat.noise_sigma_levels;
  settings.background_gradient = flat.background_gradient;
  settings.noise_seed = flat.noise_seed;
  settings.lighting = s.light;
  settings.occlusion = s.render.occlusion;
  settings.shadows = s.render.shadows;
  return settings;
}

}  // namespace

cv::Mat RenderSimulatedFrame(const Simulation& sim, int frame, int camera_index) {
  const Scenario& s = sim.scenario;
  const ScenarioCamera camera = s.FilmingCameras().at(camera_index);
  RenderSettings render;
  render.width_px = camera.camera.intrinsics.width_px;
  render.height_px = camera.camera.intrinsics.height_px;
  render.background_level = s.video.background_level;
  render.body_level = s.video.body_level;
  render.dot_level = s.video.dot_level;
  render.supersampling = s.video.supersampling;
  render.noise_sigma_levels = s.image_sigma_levels;
  render.noise_seed =
      CameraSeed(s.seed * 1000003ULL + static_cast<std::uint64_t>(frame), camera_index);
  const std::vector<RigidState> states = ExposureStates(sim, frame, camera.time_offset_s);
  if (s.render.mode == RenderMode::kRaycast) {
    std::vector<RayScene> exposure;
    for (const RigidState& state : states) {
      exposure.push_back(RayInstant(sim, camera.camera, camera_index, state, frame));
    }
    return RaycastFrame(exposure, camera.camera.intrinsics, RaycastSettingsOf(s, render));
  }
  std::vector<SceneInstant> exposure;
  for (const RigidState& state : states) {
    exposure.push_back(ProjectScene(sim, camera.camera, camera_index, state, frame));
  }
  return RenderFrame(exposure, render);
}

namespace {

// Renders every frame of camera `camera_index` into `clip`: an H.264 file, or a folder of
// lossless frames numbered by frame (frame_000123.png). `progress` gets the frames done.
void WriteClip(const Simulation& sim, int camera_index, const std::filesystem::path& clip,
               const std::function<void(int done)>& progress) {
  const Scenario& s = sim.scenario;
  if (s.video.image_folder) {
    std::filesystem::create_directories(clip);
    for (const FrameTruth& f : sim.frames) {
      const std::filesystem::path path = clip / fmt::format("frame_{:06d}.png", f.frame);
      WritePathAtomically(path, [&](const std::filesystem::path& tmp) {
        if (!cv::imwrite(tmp.string(), RenderSimulatedFrame(sim, f.frame, camera_index))) {
          throw InputError(path.string() + ": could not be written");
        }
      });
      if (progress) progress(f.frame + 1);
    }
    return;
  }
  const Camera camera = s.FilmingCameras().at(camera_index).camera;
  const cv::Size size(camera.intrinsics.width_px, camera.intrinsics.height_px);
  WritePathAtomically(clip, [&](const std::filesystem::path& tmp) {
    VideoWriter writer(tmp, size, s.video.playback_fps);
    for (const FrameTruth& f : sim.frames) {
      writer.Write(RenderSimulatedFrame(sim, f.frame, camera_index));
      if (progress) progress(f.frame + 1);
    }
    writer.Close();
  });
}

// truth_sightings.csv: per camera (its name), frame and marker in front of the camera, the
// exact pixel (as in tracks.csv) and the fractions of its image.
void WriteSightingsCsv(const Simulation& sim, std::ostream& out) {
  const std::vector<ScenarioCamera> cameras = sim.scenario.FilmingCameras();
  out << "camera,frame,time_s,marker,x_px,y_px,visible_fraction,shadowed_fraction\n";
  for (const FrameTruth& f : sim.frames) {
    for (const MarkerTruth& m : f.markers) {
      if (!m.in_front) continue;
      out << fmt::format("{},{},{:.9g},{},{:.6f},{:.6f},{:.4f},{:.4f}\n", cameras.at(m.camera).name,
                         f.frame, f.time_s, m.id, m.pixel.x(), m.pixel.y(), m.visible_fraction,
                         m.shadowed_fraction);
    }
  }
}

}  // namespace

void WriteSimulation(const Simulation& sim, const std::filesystem::path& dir,
                     const std::function<void(int done, int total)>& progress) {
  const Scenario& s = sim.scenario;
  std::filesystem::create_directories(dir);
  WriteBodyYaml(s.body, dir / "body.yaml");
  // One camera: clip.mp4 (or frames/) and camera.yaml; several: named after each camera.
  const std::vector<ScenarioCamera> cameras = s.FilmingCameras();
  const bool several = s.SeveralCameras();
  Session session;
  session.capture_fps = s.capture_fps;
  session.body_file = dir / "body.yaml";
  session.gravity.vector_mps2 = s.gravity_world_mps2;
  for (const ScenarioCamera& c : cameras) {
    SessionCamera camera;
    camera.name = several ? c.name : kSingleCameraName;
    camera.clip = dir / (several ? (s.video.image_folder ? c.name : c.name + ".mp4")
                                 : (s.video.image_folder ? "frames" : "clip.mp4"));
    camera.capture_fps = s.capture_fps;
    camera.camera_file = dir / (several ? c.name + "_camera.yaml" : "camera.yaml");
    // The clock offsets are left out: they are what the fit should find (truth.json).
    WriteCameraYaml(c.camera, camera.camera_file);
    session.cameras.push_back(std::move(camera));
  }
  WriteSessionYaml(session, dir / "session.yaml");
  WriteTracksCsv(sim.tracks, dir / "tracks.csv");
  WriteFileAtomically(dir / "truth_sightings.csv",
                      [&](std::ostream& out) { WriteSightingsCsv(sim, out); });
  WriteFileAtomically(dir / "truth.json",
                      [&](std::ostream& out) { out << TruthJson(sim).dump(2) << "\n"; });
  if (!s.video.write) return;

  const int frames = static_cast<int>(sim.frames.size());
  const int total = frames * static_cast<int>(cameras.size());
  for (int k = 0; k < static_cast<int>(cameras.size()); ++k) {
    WriteClip(sim, k, session.cameras[k].clip, [&](int done) {
      if (progress) progress(k * frames + done, total);
    });
  }
}

}  // namespace tumbletrace
