#include "tumbletrace/sim/scenario.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <set>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/yaml_reader.hpp"
#include "tumbletrace/model/mass_properties.hpp"

namespace tumbletrace {
namespace {

// `principal-1|2|3` (ascending moments) or an explicit body vector.
Eigen::Vector3d SpinAxis(YamlMap& spin, const Body& body) {
  const YAML::Node node = spin.Node("axis_body");
  if (node.IsScalar()) {
    const std::string name = node.as<std::string>();
    const int k = name == "principal-1" ? 0 : name == "principal-2" ? 1
                : name == "principal-3" ? 2 : -1;
    if (k < 0) spin.Fail("axis_body", "principal-1, principal-2, principal-3 or [x, y, z]");
    if (body.parts.empty()) spin.Fail("axis_body", "a parts list in the body file for principal axes");
    return Principal(CombineParts(body.parts).inertia_about_cm_kgm2).axes_body.col(k);
  }
  const Eigen::Vector3d axis = spin.Vector3("axis_body", "principal-1..3 or [x, y, z]");
  if (!(axis.norm() > 0)) spin.Fail("axis_body", "a non-zero vector");
  return axis.normalized();
}

// A camera file with a pose, read for `key` of `map`.
Camera ReadPosedCamera(YamlMap& map, const std::string& key, std::filesystem::path* file,
                       const std::filesystem::path& folder) {
  *file = folder / map.String(key, "the name of a camera file");
  Camera camera = ReadCameraYaml(*file);
  if (!camera.camera_from_world) {
    map.Fail(key, "a camera file with world_to_camera (the simulator needs a pose)");
  }
  return camera;
}

// `cameras: [{name, camera, time_offset_s}, ...]`; names are unique and fit for file names.
std::vector<ScenarioCamera> ReadScenarioCameras(YamlMap& root,
                                                const std::filesystem::path& folder) {
  std::vector<YamlMap> items = root.MapList("cameras");
  if (items.empty()) root.Fail("cameras", "a list of at least one camera {name, camera}");
  std::vector<ScenarioCamera> cameras;
  std::set<std::string> names;
  for (YamlMap& item : items) {
    ScenarioCamera c;
    const std::string name_expected =
        "a name of letters, digits, '-' and '_' (it names the camera's files)";
    c.name = item.String("name", name_expected);
    const bool plain = !c.name.empty() && std::all_of(c.name.begin(), c.name.end(), [](char ch) {
      return std::isalnum(static_cast<unsigned char>(ch)) || ch == '-' || ch == '_';
    });
    if (!plain) item.Fail("name", name_expected);
    if (!names.insert(c.name).second) item.Fail("name", "a name no other camera has");
    c.camera = ReadPosedCamera(item, "camera", &c.camera_file, folder);
    const std::string offset_expected = "the camera's true clock offset in s";
    c.time_offset_s = item.OptionalNumber("time_offset_s", offset_expected).value_or(0.0);
    item.Finish();
    cameras.push_back(std::move(c));
  }
  return cameras;
}

// `render: {mode, marker_kind, occlusion, shadows}`.
ScenarioRender ReadRender(YamlMap& r) {
  ScenarioRender render;
  const std::string mode = r.OptionalString("mode", "flat or raycast").value_or("flat");
  if (mode != "flat" && mode != "raycast") r.Fail("mode", "flat or raycast");
  render.mode = mode == "raycast" ? RenderMode::kRaycast : RenderMode::kFlat;
  const std::string kinds = "sphere, flat or retro";
  const std::string kind = r.OptionalString("marker_kind", kinds).value_or("sphere");
  if (kind != "sphere" && kind != "flat" && kind != "retro") r.Fail("marker_kind", kinds);
  render.marker_kind = kind == "flat"    ? MarkerMaterial::kMatte
                       : kind == "retro" ? MarkerMaterial::kRetro
                                         : MarkerMaterial::kGlossy;
  render.occlusion = r.OptionalBoolean("occlusion").value_or(true);
  render.shadows = r.OptionalBoolean("shadows").value_or(true);
  r.Finish();
  return render;
}

// `light: {towards_light_world, ambient, diffuse, specular, shininess}`.
Lighting ReadLight(YamlMap& l) {
  Lighting light;
  if (auto towards = l.OptionalVector3("towards_light_world",
                                       "a world direction towards the light [x, y, z]")) {
    if (!(towards->norm() > 0)) l.Fail("towards_light_world", "a non-zero direction");
    light.towards_light_world = towards->normalized();
  }
  const auto fraction = [&](const char* key, double fallback) {
    const double value = l.OptionalNumber(key, "a fraction of the level, >= 0").value_or(fallback);
    if (!(value >= 0 && std::isfinite(value))) l.Fail(key, "a fraction of the level, >= 0");
    return value;
  };
  light.ambient = fraction("ambient", light.ambient);
  light.diffuse = fraction("diffuse", light.diffuse);
  light.specular = fraction("specular", light.specular);
  light.shininess = l.OptionalNumber("shininess", "a highlight exponent > 0").value_or(light.shininess);
  if (!(light.shininess > 0 && std::isfinite(light.shininess))) {
    l.Fail("shininess", "a highlight exponent > 0");
  }
  l.Finish();
  return light;
}

}  // namespace

std::vector<ScenarioCamera> Scenario::FilmingCameras() const {
  if (!cameras.empty()) return cameras;
  return {ScenarioCamera{"camera", camera_file, camera, 0.0}};
}

Scenario ReadScenarioYaml(const std::filesystem::path& path) {
  YamlMap root = YamlMap::LoadFile(path);
  Scenario s;
  s.file = path;
  const std::filesystem::path folder = path.parent_path();
  s.body_file = folder / root.String("body", "the name of a body file");
  const bool several = root.Has("cameras");
  if (several && root.Has("camera")) {
    root.Fail("cameras", "either camera or a cameras list, not both (this file has both)");
  }
  s.body = ReadBodyYaml(s.body_file);
  if (several) {
    s.cameras = ReadScenarioCameras(root, folder);
  } else {
    s.camera = ReadPosedCamera(root, "camera", &s.camera_file, folder);
  }
  if (s.body.parts.empty()) {
    root.Fail("body", "a body file with a parts list (the simulator needs mass and inertia)");
  }
  s.capture_fps = root.Number("capture_fps", "a capture rate in frames/s");
  if (!(s.capture_fps > 0)) root.Fail("capture_fps", "a positive rate in frames/s");
  s.frames = root.Integer("frames", "a frame count");
  if (s.frames < 1) root.Fail("frames", "at least 1 frame");
  s.exposure_s = root.OptionalNumber("exposure_s", "a shutter time in s").value_or(0.0);
  if (s.exposure_s < 0 || s.exposure_s > 1.0 / s.capture_fps) {
    root.Fail("exposure_s", "a shutter time between 0 and one frame interval, s");
  }
  if (auto g = root.OptionalVector3("gravity_mps2", "a world vector [x, y, z] in m/s^2")) {
    s.gravity_world_mps2 = *g;
  }

  YamlMap launch = root.Map("launch");
  s.launch_cm_world_m = launch.Vector3("position_m", "the CM's world position [x, y, z], m");
  s.launch_velocity_world_mps = launch.Vector3("velocity_mps", "the CM's velocity, m/s");
  if (launch.Has("orientation")) {
    YamlMap o = launch.Map("orientation");
    const Eigen::Vector3d axis = o.Vector3("axis", "a rotation axis [x, y, z]");
    const double angle_deg = o.Number("angle_deg", "an angle in degrees");
    if (!(axis.norm() > 0)) o.Fail("axis", "a non-zero vector");
    s.launch_world_from_body = Eigen::AngleAxisd(angle_deg * M_PI / 180.0, axis.normalized());
    o.Finish();
  }
  launch.Finish();

  YamlMap spin = root.Map("spin");
  if (spin.Has("omega_body_radps")) {
    s.launch_omega_body_radps = spin.Vector3("omega_body_radps", "[x, y, z] in rad/s");
  } else {
    const Eigen::Vector3d axis = SpinAxis(spin, s.body);
    const double rate = spin.Number("rate_rev_per_s", "a spin rate in rev/s");
    s.launch_omega_body_radps = 2.0 * M_PI * rate * axis;
  }
  spin.Finish();

  if (root.Has("noise")) {
    YamlMap noise = root.Map("noise");
    s.tracks_sigma_px = noise.OptionalNumber("tracks_sigma_px", "px").value_or(0.0);
    s.image_sigma_levels = noise.OptionalNumber("image_sigma_levels", "grey levels").value_or(2.0);
    if (auto seed = noise.OptionalInteger("seed", "a non-negative integer")) {
      if (*seed < 0) noise.Fail("seed", "a non-negative integer");
      s.seed = static_cast<std::uint64_t>(*seed);
    }
    if (s.tracks_sigma_px < 0 || s.image_sigma_levels < 0) noise.Fail("", "non-negative noise");
    noise.Finish();
  }
  if (root.Has("occlusions")) {
    for (YamlMap o : root.MapList("occlusions")) {
      Occlusion occlusion;
      occlusion.marker_id = o.Integer("marker", "a marker id of the body");
      occlusion.first_frame = o.Integer("first_frame", "a frame number");
      occlusion.last_frame = o.Integer("last_frame", "a frame number");
      if (s.body.FindMarker(occlusion.marker_id) == nullptr) o.Fail("marker", "a marker id of the body");
      if (occlusion.last_frame < occlusion.first_frame) o.Fail("last_frame", "a frame at or after first_frame");
      o.Finish();
      s.occlusions.push_back(occlusion);
    }
  }
  s.glints_per_frame = root.OptionalInteger("glints_per_frame", "a count of spots per frame").value_or(0);
  if (s.glints_per_frame < 0) root.Fail("glints_per_frame", "a non-negative count");
  if (root.Has("video")) {
    YamlMap v = root.Map("video");
    s.video.write = v.OptionalBoolean("write").value_or(true);
    const std::string format = v.OptionalString("format", "mp4 or png").value_or("mp4");
    if (format != "mp4" && format != "png") v.Fail("format", "mp4 (H.264 video) or png (an image folder)");
    s.video.image_folder = format == "png";
    s.video.playback_fps = v.OptionalNumber("playback_fps", "frames/s").value_or(30.0);
    s.video.exposure_samples = v.OptionalInteger("exposure_samples").value_or(8);
    s.video.supersampling = v.OptionalInteger("supersampling").value_or(4);
    s.video.background_level = v.OptionalNumber("background_level", "0..255").value_or(40.0);
    s.video.body_level = v.OptionalNumber("body_level", "0..255").value_or(70.0);
    s.video.dot_level = v.OptionalNumber("dot_level", "0..255").value_or(230.0);
    if (s.video.exposure_samples < 1 || s.video.supersampling < 1) {
      v.Fail("", "exposure_samples and supersampling of at least 1");
    }
    v.Finish();
  }
  if (root.Has("render")) {
    YamlMap r = root.Map("render");
    s.render = ReadRender(r);
  }
  if (root.Has("light")) {
    YamlMap l = root.Map("light");
    s.light = ReadLight(l);
  }
  if (s.render.mode == RenderMode::kRaycast && s.video.supersampling > 16) {
    root.Fail("video", "supersampling of at most 16 with render mode raycast");
  }
  if (root.Has("aero")) {
    YamlMap a = root.Map("aero");
    const bool has_k = a.Has("k_per_m"), has_cd = a.Has("cd");
    if (has_k == has_cd) a.Fail("", "exactly one of k_per_m and cd");
    if (has_k) {
      s.aero.k_per_m = a.Number("k_per_m", "a drag constant k = rho C_d A / (2 m) in 1/m");
    } else {
      s.aero.cd = a.Number("cd", "a drag coefficient");
      s.aero.density_kgpm3 = a.OptionalNumber("density_kgpm3", "an air density in kg/m^3").value_or(1.225);
      if (!s.body.reference_area_m2) {
        a.Fail("cd", "k_per_m, or a body file with aero_reference: {area: ..} for C_d");
      }
      // k = rho C_d A / (2 m), with the parts list's mass (the simulator's truth).
      const double mass_kg = CombineParts(s.body.parts).mass_kg;
      s.aero.k_per_m = *s.aero.density_kgpm3 * *s.aero.cd * *s.body.reference_area_m2 / (2.0 * mass_kg);
    }
    s.aero.k_lift = a.OptionalNumber("k_lift", "a Magnus coefficient (dimensionless)").value_or(0.0);
    if (auto wind = a.OptionalVector3("wind_mps", "a steady wind [x, y, z] in m/s")) {
      s.aero.wind_world_mps = *wind;
    }
    a.Finish();
  }
  if (root.Has("hand")) {
    YamlMap h = root.Map("hand");
    ScenarioHand hand;
    hand.release_time_s = h.Number("release_time_s", "the time of release, s");
    if (!(hand.release_time_s >= 0)) h.Fail("release_time_s", "a time of release >= 0, s");
    hand.acceleration_mps2 =
        h.Vector3("acceleration_mps2", "the hand's push beyond gravity [x, y, z], m/s^2");
    if (auto alpha = h.OptionalVector3("angular_acceleration_radps2",
                                       "an angular acceleration in the body frame, rad/s^2")) {
      hand.angular_acceleration_body_radps2 = *alpha;
    }
    h.Finish();
    s.hand = hand;
  }
  if (root.Has("impact")) {
    YamlMap m = root.Map("impact");
    ScenarioImpact impact;
    impact.time_s = m.Number("time_s", "the time of impact, s");
    if (auto n = m.OptionalVector3("normal", "the surface normal [x, y, z]")) {
      if (!(n->norm() > 0)) m.Fail("normal", "a non-zero normal");
      impact.normal_world = n->normalized();
    }
    impact.restitution = m.OptionalNumber("restitution", "0 < e <= 1").value_or(impact.restitution);
    if (!(impact.restitution > 0 && impact.restitution <= 1)) m.Fail("restitution", "0 < e <= 1");
    impact.spin_kept = m.OptionalNumber("spin_kept", "0 < fraction <= 1").value_or(impact.spin_kept);
    if (!(impact.spin_kept > 0 && impact.spin_kept <= 1)) m.Fail("spin_kept", "0 < fraction <= 1");
    m.Finish();
    s.impact = impact;
  }
  if (s.hand && s.impact && !(s.impact->time_s > s.hand->release_time_s)) {
    root.Fail("impact", "an impact after the release");
  }
  root.Finish();
  return s;
}

}  // namespace tumbletrace
