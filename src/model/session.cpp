#include "tumbletrace/model/session.hpp"

#include <fmt/format.h>

#include <cmath>
#include <numbers>
#include <set>

#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/yaml_reader.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

// Standard gravity (3rd CGPM, 1901).
constexpr double kStandardGravityMps2 = 9.80665;

fs::path ResolveFile(YamlMap& map, const std::string& key, const fs::path& folder,
                     const std::string& expected) {
  const std::string name = map.String(key, expected);
  if (name.empty()) map.Fail(key, expected);
  const fs::path path(name);
  return path.is_absolute() ? path : folder / path;
}

GravitySpec ReadGravity(YamlMap& map) {
  GravitySpec gravity;
  const bool has_vector = map.Has("gravity_mps2");
  const bool has_place = map.Has("gravity");
  if (has_vector && has_place) {
    map.Fail("gravity", "only one of gravity_mps2 and gravity (this file has both)");
  }
  if (has_vector) {
    const std::string expected =
        "a world-frame vector [x, y, z] in m/s^2, or a positive magnitude in m/s^2";
    if (map.Node("gravity_mps2").IsScalar()) {
      const double magnitude = map.Number("gravity_mps2", expected);
      if (!(magnitude > 0)) map.Fail("gravity_mps2", expected);
      gravity.magnitude_mps2 = magnitude;
    } else {
      const Eigen::Vector3d vector = map.Vector3("gravity_mps2", expected);
      if (!(vector.norm() > 0)) map.Fail("gravity_mps2", expected);
      gravity.vector_mps2 = vector;
    }
  } else if (has_place) {
    YamlMap place = map.Map("gravity");
    const std::string latitude_expected = "a latitude in degrees, -90 to 90";
    const double latitude_deg = place.Number("latitude_deg", latitude_expected);
    if (!(std::abs(latitude_deg) <= 90.0)) place.Fail("latitude_deg", latitude_expected);
    gravity.latitude_deg = latitude_deg;
    const std::string elevation_expected = "an elevation above the ellipsoid in m, -1000 to 20000";
    gravity.elevation_m = place.OptionalNumber("elevation_m", elevation_expected).value_or(0.0);
    if (!(*gravity.elevation_m >= -1000.0 && *gravity.elevation_m <= 20000.0)) {
      place.Fail("elevation_m", elevation_expected);
    }
    place.Finish();
  } else {
    gravity.vector_mps2 = Eigen::Vector3d(0.0, 0.0, -kStandardGravityMps2);
  }
  return gravity;
}

MarkerDetectionSettings ReadMarkerSettings(YamlMap& map) {
  MarkerDetectionSettings settings;
  if (const auto kind = map.OptionalString("kind", "bright-dots or dark-dots")) {
    if (*kind != "bright-dots" && *kind != "dark-dots") {
      map.Fail("kind", "bright-dots or dark-dots");
    }
    settings.kind = *kind == "bright-dots" ? MarkerKind::kBrightDots : MarkerKind::kDarkDots;
  }
  settings.threshold = map.OptionalNumber("threshold", "a positive intensity threshold");
  if (settings.threshold && !(*settings.threshold > 0)) {
    map.Fail("threshold", "a positive intensity threshold");
  }
  const std::string area_expected = "a positive area in pixels";
  settings.min_area_px =
      map.OptionalNumber("min_area_px", area_expected).value_or(settings.min_area_px);
  if (!(settings.min_area_px > 0)) map.Fail("min_area_px", area_expected);
  settings.max_area_px =
      map.OptionalNumber("max_area_px", area_expected).value_or(settings.max_area_px);
  if (!(settings.max_area_px >= settings.min_area_px)) {
    map.Fail("max_area_px",
             fmt::format("an area in pixels not below min_area_px ({})", settings.min_area_px));
  }
  settings.background_radius_px = map.OptionalInteger(
      "background_radius_px", "a radius in whole pixels, 1 to 50, wider than a dot's radius");
  if (settings.background_radius_px &&
      (*settings.background_radius_px < 1 || *settings.background_radius_px > 50)) {
    map.Fail("background_radius_px", "a radius in whole pixels, 1 to 50, wider than a dot's radius");
  }
  const std::string offset_expected = "a centre offset in pixels, 0 to 5";
  settings.centre_offset_px =
      map.OptionalNumber("centre_offset_px", offset_expected).value_or(settings.centre_offset_px);
  if (!(settings.centre_offset_px >= 0 && settings.centre_offset_px <= 5)) {
    map.Fail("centre_offset_px", offset_expected);
  }
  map.Finish();
  return settings;
}

constexpr const char* kClipExpected =
    "a video file or a folder of numbered images, relative to this file";
constexpr const char* kCameraFileExpected = "a camera file, relative to this file";
constexpr const char* kRateExpected = "a positive capture rate in frames per second";

double ReadCaptureRate(YamlMap& map, const std::string& expected) {
  const double fps = map.Number("capture_fps", expected);
  if (!(fps > 0)) map.Fail("capture_fps", kRateExpected);
  return fps;
}

// An optional `sensor_window: {offset_px, size_px}` (checked against the camera file's full
// frame once that is read).
void ReadSessionWindow(YamlMap& map, SessionCamera* camera) {
  if (!map.Has("sensor_window")) return;
  YamlMap window_map = map.Map("sensor_window");
  SensorWindow window;
  const std::vector<double> offset =
      window_map.Numbers("offset_px", 2, "[x, y] of the window's top-left pixel on the sensor");
  window.offset_px = Eigen::Vector2d(offset[0], offset[1]);
  const std::vector<double> size =
      window_map.Numbers("size_px", 2, "[width, height] as two positive whole numbers of pixels");
  for (double v : size) {
    if (v < 1 || v != std::floor(v) || v > 1e6) {
      window_map.Fail("size_px", "[width, height] as two positive whole numbers of pixels");
    }
  }
  window.size_px = Eigen::Vector2i(static_cast<int>(size[0]), static_cast<int>(size[1]));
  window_map.Finish();
  camera->sensor_window = window;
  camera->window_where = fmt::format("{}:{}: key '{}'", window_map.file_label(), window_map.line(),
                                     window_map.key_path());
}

// Applies the session's window to the camera file's full-frame calibration.
void ApplySessionWindow(SessionCamera* camera) {
  if (!camera->sensor_window) return;
  if (camera->camera.sensor_window) {
    throw InputError(fmt::format("{}: expected no sensor_window here, since the camera file {} "
                                 "has one already (give it in one place)",
                                 camera->window_where, camera->camera_file.string()));
  }
  if (const std::string problem = SensorWindowProblem(camera->camera.intrinsics, *camera->sensor_window);
      !problem.empty()) {
    throw InputError(fmt::format("{}: expected {} of the camera file {}", camera->window_where,
                                 problem, camera->camera_file.string()));
  }
  ApplySensorWindow(*camera->sensor_window, &camera->camera);
}

std::string WindowText(const SensorWindow& w) {
  return fmt::format("{{offset_px: [{}, {}], size_px: [{}, {}]}}", w.offset_px.x(),
                     w.offset_px.y(), w.size_px.x(), w.size_px.y());
}

// The single-camera form: `clip`, `capture_fps` and `camera` at the top level.
SessionCamera ReadSingleCamera(YamlMap& map, const fs::path& folder) {
  SessionCamera camera;
  camera.name = kSingleCameraName;
  camera.clip = ResolveFile(map, "clip", folder, kClipExpected);
  camera.capture_fps =
      ReadCaptureRate(map, "the camera's capture rate in frames per second");
  camera.camera_file = ResolveFile(map, "camera", folder, kCameraFileExpected);
  ReadSessionWindow(map, &camera);
  return camera;
}

// The list form: `cameras: [{name, clip, camera, capture_fps, time_offset_s}, ...]`, the
// top-level `capture_fps` (when given) being every camera's default.
std::vector<SessionCamera> ReadCameraList(YamlMap& map, const fs::path& folder,
                                          std::optional<double> default_fps) {
  std::vector<YamlMap> items = map.MapList("cameras");
  if (items.empty()) map.Fail("cameras", "a list of at least one camera {name, clip, camera}");
  std::vector<SessionCamera> cameras;
  std::set<std::string> names;
  for (YamlMap& item : items) {
    SessionCamera camera;
    camera.name = item.String("name", "a name for the camera");
    if (camera.name.empty()) item.Fail("name", "a non-empty name for the camera");
    if (!names.insert(camera.name).second) {
      item.Fail("name", "a name no other camera of this session has");
    }
    camera.clip = ResolveFile(item, "clip", folder, kClipExpected);
    camera.camera_file = ResolveFile(item, "camera", folder, kCameraFileExpected);
    if (item.Has("capture_fps") || !default_fps) {
      camera.capture_fps = ReadCaptureRate(
          item, "the camera's capture rate in frames per second (or capture_fps at the top "
                "level for every camera)");
    } else {
      camera.capture_fps = *default_fps;
    }
    const std::string offset_expected =
        "the camera's clock offset in s (its frame i is at i / capture_fps + time_offset_s)";
    camera.time_offset_s = item.OptionalNumber("time_offset_s", offset_expected).value_or(0.0);
    ReadSessionWindow(item, &camera);
    item.Finish();
    cameras.push_back(std::move(camera));
  }
  return cameras;
}

// How a file named by the session is written into `session_file`. A path as ReadSessionYaml
// returns it (absolute, or relative to the current folder) that lies inside the session
// file's folder is written relative to that folder. Any other relative path is taken to be
// relative to the session folder already (as a writer that names files beside the session
// gives them) and is written as given; any other absolute path is written as it is.
std::string SessionRelative(const fs::path& file, const fs::path& session_file) {
  if (file.empty()) return "";
  const fs::path parent = session_file.parent_path();
  fs::path folder = parent.empty() ? fs::current_path() : fs::absolute(parent).lexically_normal();
  if (!folder.has_filename()) folder = folder.parent_path();  // "a/b/" -> "a/b"
  const fs::path relative = fs::absolute(file).lexically_normal().lexically_relative(folder);
  if (!relative.empty() && *relative.begin() != ".." && relative != ".") {
    return relative.generic_string();
  }
  return file.generic_string();
}

std::string Scalar(const std::string& text) {
  YAML::Emitter emitter;
  emitter << text;
  return emitter.c_str();
}

// Whether the single-camera form says all there is to say about the session's cameras.
bool SingleFormExpresses(const Session& session) {
  if (session.cameras.size() != 1) return false;
  const SessionCamera& camera = session.cameras.front();
  return camera.name == kSingleCameraName && camera.capture_fps == session.capture_fps &&
         camera.time_offset_s == 0.0;
}

// The list form, in block style (names need no quoting rules of flow maps). A camera's rate
// is written when it differs from the session's default, its offset when not zero.
void WriteCameraList(const Session& session, const fs::path& path, std::ostream& out) {
  if (session.capture_fps > 0) {
    out << "capture_fps: " << fmt::format("{}", session.capture_fps) << "\n";
  }
  out << "cameras:\n";
  for (const SessionCamera& camera : session.cameras) {
    out << "  - name: " << Scalar(camera.name) << "\n";
    out << "    clip: " << Scalar(SessionRelative(camera.clip, path)) << "\n";
    out << "    camera: " << Scalar(SessionRelative(camera.camera_file, path)) << "\n";
    if (camera.capture_fps != session.capture_fps) {
      out << "    capture_fps: " << fmt::format("{}", camera.capture_fps) << "\n";
    }
    if (camera.time_offset_s != 0.0) {
      out << "    time_offset_s: " << fmt::format("{}", camera.time_offset_s) << "\n";
    }
    if (camera.sensor_window) out << "    sensor_window: " << WindowText(*camera.sensor_window) << "\n";
  }
}

}  // namespace

// Somigliana's closed formula with the WGS 84 constants (NIMA TR8350.2, 3rd ed., eq. 4-1):
//   gamma(phi) = gamma_e (1 + k sin^2 phi) / sqrt(1 - e^2 sin^2 phi)
// and the height correction to second order (eq. 4-3, constants as in REFERENCES.md):
//   gamma(phi, h) = gamma(phi) [1 - (k1 - k2 sin^2 phi) h + k3 h^2]
double NormalGravityWgs84(double latitude_deg, double elevation_m) {
  constexpr double kGammaEquatorMps2 = 9.7803253359;
  constexpr double kSomiglianaK = 0.00193185265241;
  constexpr double kEccentricitySquared = 0.00669437999013;
  constexpr double kHeight1PerM = 3.15704e-7;
  constexpr double kHeight2PerM = 2.10269e-9;
  constexpr double kHeight3PerM2 = 7.37452e-14;
  const double sin_phi = std::sin(latitude_deg * std::numbers::pi / 180.0);
  const double s2 = sin_phi * sin_phi;
  const double gamma =
      kGammaEquatorMps2 * (1.0 + kSomiglianaK * s2) / std::sqrt(1.0 - kEccentricitySquared * s2);
  const double h = elevation_m;
  return gamma * (1.0 - (kHeight1PerM - kHeight2PerM * s2) * h + kHeight3PerM2 * h * h);
}

std::optional<Eigen::Vector3d> GravitySpec::WorldVector() const {
  if (vector_mps2) return *vector_mps2;
  if (latitude_deg) {
    return Eigen::Vector3d(0.0, 0.0, -NormalGravityWgs84(*latitude_deg, elevation_m.value_or(0.0)));
  }
  return std::nullopt;
}

double GravitySpec::Magnitude() const {
  if (vector_mps2) return vector_mps2->norm();
  if (magnitude_mps2) return *magnitude_mps2;
  if (latitude_deg) return NormalGravityWgs84(*latitude_deg, elevation_m.value_or(0.0));
  return kStandardGravityMps2;
}

std::vector<double> Session::CaptureRates() const {
  std::vector<double> rates;
  for (const SessionCamera& camera : cameras) rates.push_back(camera.capture_fps);
  return rates;
}

std::vector<Camera> Session::CameraModels() const {
  std::vector<Camera> models;
  for (const SessionCamera& camera : cameras) models.push_back(camera.camera);
  return models;
}

std::vector<double> Session::TimeOffsets() const {
  std::vector<double> offsets;
  for (const SessionCamera& camera : cameras) offsets.push_back(camera.time_offset_s);
  return offsets;
}

Session ReadSessionYaml(const std::filesystem::path& path) {
  YamlMap map = YamlMap::LoadFile(path);
  const fs::path folder = path.parent_path();
  Session session;
  session.file = path;
  const bool list_form = map.Has("cameras");
  if (list_form && (map.Has("clip") || map.Has("camera"))) {
    map.Fail("cameras",
             "either a cameras list or clip and camera at the top level, not both (this file "
             "has both)");
  }
  if (list_form) {
    std::optional<double> default_fps;
    if (map.Has("capture_fps")) {
      default_fps = ReadCaptureRate(map, "every camera's capture rate in frames per second");
    }
    session.cameras = ReadCameraList(map, folder, default_fps);
    session.capture_fps = default_fps.value_or(session.cameras.front().capture_fps);
  } else {
    if (!map.Has("clip") && !map.Has("camera")) {
      map.Fail("clip", std::string(kClipExpected) +
                           ", with camera: a camera file (or a cameras list of {name, clip, "
                           "camera})");
    }
    session.cameras.push_back(ReadSingleCamera(map, folder));
    session.capture_fps = session.cameras.front().capture_fps;
  }
  session.body_file = ResolveFile(map, "body", folder, "a body file, relative to this file");
  session.gravity = ReadGravity(map);
  if (map.Has("markers")) {
    YamlMap markers = map.Map("markers");
    session.markers = ReadMarkerSettings(markers);
  }
  if (map.Has("frames")) {
    YamlMap frames = map.Map("frames");
    const std::string expected = "a frame number, 0 or more";
    session.first_frame = frames.OptionalInteger("first", expected);
    if (session.first_frame && *session.first_frame < 0) frames.Fail("first", expected);
    session.last_frame = frames.OptionalInteger("last", expected);
    if (session.last_frame && *session.last_frame < session.first_frame.value_or(0)) {
      frames.Fail("last", "a frame number not before frames.first");
    }
    frames.Finish();
  }
  if (map.Has("air")) {
    YamlMap air = map.Map("air");
    const auto positive = [&](const std::string& key, const std::string& expected) {
      const std::optional<double> v = air.OptionalNumber(key, expected);
      if (v && !(*v > 0)) air.Fail(key, expected);
      return v;
    };
    session.air.density_kgpm3 = positive("density_kgpm3", "an air density in kg/m^3 (positive)");
    session.air.temperature_c = air.OptionalNumber("temperature_c", "the air temperature in degC");
    if (session.air.temperature_c && !(*session.air.temperature_c > -60 && *session.air.temperature_c < 60)) {
      air.Fail("temperature_c", "an air temperature between -60 and 60 degC");
    }
    session.air.pressure_pa = positive("pressure_pa", "the air pressure in Pa (e.g. 101325)");
    if (const auto rh = air.OptionalNumber("relative_humidity_percent", "0 to 100 %")) {
      if (!(*rh >= 0 && *rh <= 100)) air.Fail("relative_humidity_percent", "0 to 100 %");
      session.air.relative_humidity = *rh / 100.0;
    }
    if (const auto co2 = positive("co2_mole_fraction", "a CO2 mole fraction (e.g. 0.0004)")) {
      session.air.co2_mole_fraction = *co2;
    }
    if (session.air.density_kgpm3 &&
        (session.air.temperature_c || session.air.pressure_pa || session.air.relative_humidity)) {
      air.Fail("density_kgpm3", "either density_kgpm3 or the conditions (temperature_c, "
                                "pressure_pa, relative_humidity_percent), not both");
    }
    air.Finish();
  }
  if (const auto wind = map.OptionalVector3("wind_mps", "a steady wind [x, y, z] in m/s, world frame")) {
    session.wind_world_mps = *wind;
  }
  if (const auto drag = map.OptionalString("drag", "auto, none, quadratic or quadratic+lift")) {
    if (*drag != "auto" && *drag != "none" && *drag != "quadratic" && *drag != "quadratic+lift") {
      map.Fail("drag", "auto, none, quadratic or quadratic+lift");
    }
    session.drag = *drag;
  }
  if (const auto window = map.OptionalString("window", "auto or all")) {
    if (*window != "auto" && *window != "all") map.Fail("window", "auto (find the free flight) or all");
    session.search_window = *window == "auto";
  }
  session.estimate_gravity = map.OptionalBoolean("estimate_gravity").value_or(false);
  session.estimate_time_offsets = map.OptionalBoolean("estimate_time_offsets").value_or(false);
  if (session.estimate_time_offsets && session.cameras.size() < 2) {
    map.Fail("estimate_time_offsets",
             "false with a single camera (the first camera sets the clock: with no second "
             "camera there is no offset to estimate)");
  }
  map.Finish();
  // The named files are read after the session itself is known to be well formed.
  for (SessionCamera& camera : session.cameras) {
    camera.camera = ReadCameraYaml(camera.camera_file);
    ApplySessionWindow(&camera);
  }
  session.body = ReadBodyYaml(session.body_file);
  return session;
}

void WriteSessionYaml(const Session& session, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) {
    if (SingleFormExpresses(session)) {
      const SessionCamera& camera = session.cameras.front();
      out << "clip: " << Scalar(SessionRelative(camera.clip, path)) << "\n";
      out << "capture_fps: " << fmt::format("{}", session.capture_fps) << "\n";
      out << "camera: " << Scalar(SessionRelative(camera.camera_file, path)) << "\n";
      if (camera.sensor_window) out << "sensor_window: " << WindowText(*camera.sensor_window) << "\n";
    } else {
      WriteCameraList(session, path, out);
    }
    out << "body: " << Scalar(SessionRelative(session.body_file, path)) << "\n";
    const GravitySpec& gravity = session.gravity;
    if (gravity.vector_mps2) {
      const Eigen::Vector3d& g = *gravity.vector_mps2;
      out << fmt::format("gravity_mps2: [{}, {}, {}]\n", g.x(), g.y(), g.z());
    } else if (gravity.magnitude_mps2) {
      out << fmt::format("gravity_mps2: {}\n", *gravity.magnitude_mps2);
    } else if (gravity.latitude_deg) {
      out << fmt::format("gravity: {{latitude_deg: {}, elevation_m: {}}}\n", *gravity.latitude_deg,
                         gravity.elevation_m.value_or(0.0));
    }
    const MarkerDetectionSettings& markers = session.markers;
    out << fmt::format("markers: {{kind: {}",
                       markers.kind == MarkerKind::kBrightDots ? "bright-dots" : "dark-dots");
    if (markers.threshold) out << fmt::format(", threshold: {}", *markers.threshold);
    if (markers.background_radius_px) {
      out << fmt::format(", background_radius_px: {}", *markers.background_radius_px);
    }
    out << fmt::format(", min_area_px: {}, max_area_px: {}", markers.min_area_px,
                       markers.max_area_px);
    if (markers.centre_offset_px != MarkerDetectionSettings{}.centre_offset_px) {
      out << fmt::format(", centre_offset_px: {}", markers.centre_offset_px);
    }
    out << "}\n";
    if (session.first_frame || session.last_frame) {
      out << "frames: {";
      if (session.first_frame) out << "first: " << *session.first_frame;
      if (session.first_frame && session.last_frame) out << ", ";
      if (session.last_frame) out << "last: " << *session.last_frame;
      out << "}\n";
    }
    if (session.estimate_time_offsets) out << "estimate_time_offsets: true\n";
    if (session.air.density_kgpm3) {
      out << fmt::format("air: {{density_kgpm3: {}}}\n", *session.air.density_kgpm3);
    }
    if (session.wind_world_mps.norm() > 0) {
      out << fmt::format("wind_mps: [{}, {}, {}]\n", session.wind_world_mps.x(),
                         session.wind_world_mps.y(), session.wind_world_mps.z());
    }
    if (session.drag != "auto") out << "drag: " << session.drag << "\n";
    if (!session.search_window) out << "window: all\n";
    if (session.estimate_gravity) out << "estimate_gravity: true\n";
  });
}

}  // namespace tumbletrace
