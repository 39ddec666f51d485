#include "tumbletrace/model/session.hpp"

#include <fmt/format.h>

#include <cmath>
#include <numbers>

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
  map.Finish();
  return settings;
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

Session ReadSessionYaml(const std::filesystem::path& path) {
  YamlMap map = YamlMap::LoadFile(path);
  const fs::path folder = path.parent_path();
  Session session;
  session.file = path;
  session.clip = ResolveFile(map, "clip", folder,
                             "a video file or a folder of numbered images, relative to this file");
  session.capture_fps = map.Number("capture_fps", "the camera's capture rate in frames per second");
  if (!(session.capture_fps > 0)) {
    map.Fail("capture_fps", "a positive capture rate in frames per second");
  }
  session.camera_file = ResolveFile(map, "camera", folder, "a camera file, relative to this file");
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
  map.Finish();
  // The named files are read after the session itself is known to be well formed.
  session.camera = ReadCameraYaml(session.camera_file);
  session.body = ReadBodyYaml(session.body_file);
  return session;
}

void WriteSessionYaml(const Session& session, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << "clip: " << Scalar(SessionRelative(session.clip, path)) << "\n";
    out << "capture_fps: " << fmt::format("{}", session.capture_fps) << "\n";
    out << "camera: " << Scalar(SessionRelative(session.camera_file, path)) << "\n";
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
    out << fmt::format(", min_area_px: {}, max_area_px: {}}}\n", markers.min_area_px,
                       markers.max_area_px);
    if (session.first_frame || session.last_frame) {
      out << "frames: {";
      if (session.first_frame) out << "first: " << *session.first_frame;
      if (session.first_frame && session.last_frame) out << ", ";
      if (session.last_frame) out << "last: " << *session.last_frame;
      out << "}\n";
    }
  });
}

}  // namespace tumbletrace
