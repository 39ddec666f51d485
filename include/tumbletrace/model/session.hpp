// session.yaml: one throw filmed by one camera, or by several synchronised ones
// (docs/files.md, with its list form).
#pragma once

#include <Eigen/Core>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/model/air.hpp"
#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

// Gravity as the session gives it: a world vector, a magnitude (direction estimated by
// the fit), or a place (normal gravity, WGS 84, pointing along world -z).
struct GravitySpec {
  std::optional<Eigen::Vector3d> vector_mps2;
  std::optional<double> magnitude_mps2;
  std::optional<double> latitude_deg;
  std::optional<double> elevation_m;

  // The world gravity vector when it is fixed by the spec (vector or place).
  std::optional<Eigen::Vector3d> WorldVector() const;
  double Magnitude() const;
};

// WGS 84 normal gravity with the free-air height correction (NIMA TR8350.2, 3rd ed.,
// eq. 4-1 and 4-3), m/s^2.
double NormalGravityWgs84(double latitude_deg, double elevation_m);

enum class MarkerKind { kBrightDots, kDarkDots };

struct MarkerDetectionSettings {
  MarkerKind kind = MarkerKind::kBrightDots;
  std::optional<double> threshold;  // absolute intensity threshold above background
  double min_area_px = 3.0;
  double max_area_px = 2000.0;
  std::optional<int> background_radius_px;  // the detector's background disc; wider than a dot
  // 1-sigma of the part of a detected centre's error that stays through the flight (a
  // marker's shading, blur and place in the field), px; enters every sigma (fit/noise_model.hpp)
  double centre_offset_px = 0.05;
};

// One camera of a session: its clip, its calibration and its clock. Frame i of its clip is
// exposed at world time i / capture_fps + time_offset_s.
struct SessionCamera {
  std::string name;                   // "camera" in the single-camera form
  std::filesystem::path clip;         // resolved relative to the session file
  double capture_fps = 0.0;
  std::filesystem::path camera_file;  // resolved relative to the session file
  Camera camera;
  double time_offset_s = 0.0;
  // The session's own sensor_window for this camera (a clip recorded with a cropped
  // read-out of a full-frame calibration), applied to `camera` when read; `window_where`
  // names the key for messages.
  std::optional<SensorWindow> sensor_window;
  std::string window_where;
};

// The name the single-camera form gives its camera.
inline constexpr const char* kSingleCameraName = "camera";

struct Session {
  std::filesystem::path file;          // the session file itself
  std::vector<SessionCamera> cameras;  // one in the single-camera form, in file order
  double capture_fps = 0.0;            // the default capture rate of every camera
  std::filesystem::path body_file;
  Body body;
  GravitySpec gravity;
  MarkerDetectionSettings markers;
  std::optional<int> first_frame;      // optional frame range of every clip to use
  std::optional<int> last_frame;
  // Estimate every camera's clock offset relative to the first camera's in the fit.
  bool estimate_time_offsets = false;
  // The air (`air:`), a steady wind (`wind_mps:`), the drag models to try (`drag:` auto,
  // none, quadratic, quadratic+lift).
  AirSpec air;
  Eigen::Vector3d wind_world_mps = Eigen::Vector3d::Zero();
  std::string drag = "auto";
  // `window: auto` (default) finds the free-flight frames unless `frames` gives them;
  // `window: all` fits every frame read.
  bool search_window = true;
  // `estimate_gravity: true`: g is estimated, as a check of the capture rate and scale.
  bool estimate_gravity = false;

  // Per camera, in the order of `cameras`.
  std::vector<double> CaptureRates() const;
  std::vector<Camera> CameraModels() const;
  std::vector<double> TimeOffsets() const;
};

// Reads the session and the camera and body files it names (paths relative to the
// session file). Throws InputError naming file and key.
Session ReadSessionYaml(const std::filesystem::path& path);
// Writes session.yaml with the given file names (relative paths kept as given): the
// single-camera form for one camera it can express (named "camera", the session's rate, no
// clock offset), the list form otherwise.
void WriteSessionYaml(const Session& session, const std::filesystem::path& path);

}  // namespace tumbletrace
