#include "tumbletrace/model/camera.hpp"

#include <fmt/format.h>

#include <sstream>

#include <Eigen/Dense>
#include <cmath>

#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/yaml_reader.hpp"

namespace tumbletrace {
namespace {

// A rotation is accepted when |R^T R - E| and |det R - 1| are below this.
constexpr double kRotationTolerance = 1e-6;
// Below this a rotation is taken as written; above it, it is made orthonormal.
constexpr double kExactRotationTolerance = 1e-14;

// Reads [a, b] as two positive whole numbers (pixel counts).
Eigen::Vector2i ReadPixelCount(YamlMap& map, const std::string& key, const std::string& expected) {
  const std::vector<double> values = map.Numbers(key, 2, expected);
  for (double value : values) {
    if (value < 1 || value != std::floor(value) || value > 1e6) map.Fail(key, expected);
  }
  return Eigen::Vector2i(static_cast<int>(values[0]), static_cast<int>(values[1]));
}

// Shortest text that reads back as the same double.
std::string Num(double value) { return fmt::format("{}", value); }

}  // namespace

bool ProjectWorldPoint(const Camera& camera, const Eigen::Vector3d& p_world_m,
                       Eigen::Vector2d* pixel) {
  const Eigen::Vector3d p_camera_m =
      camera.camera_from_world ? camera.camera_from_world->Apply(p_world_m) : p_world_m;
  return ProjectCameraPoint(camera.intrinsics, p_camera_m.data(), pixel->data());
}

// Inverts the distortion of camera.hpp: solves distort(x) = x_d for the normalised point x
// by Gauss-Newton with the analytic 2x2 Jacobian, starting from x = x_d. With
// R = 1 + k1 r^2 + k2 r^4 + k3 r^6 and R' = dR/d(r^2) = k1 + 2 k2 r^2 + 3 k3 r^4:
//   dx_d/dx = R + 2 x^2 R' + 2 p1 y + 6 p2 x,   dx_d/dy = 2 x y R' + 2 p1 x + 2 p2 y
//   dy_d/dx = 2 x y R' + 2 p1 x + 2 p2 y,       dy_d/dy = R + 2 y^2 R' + 6 p1 y + 2 p2 x
Eigen::Vector2d UndistortToNormalised(const CameraIntrinsics& k, const Eigen::Vector2d& pixel) {
  const Eigen::Vector2d target((pixel.x() - k.cx_px) / k.fx_px, (pixel.y() - k.cy_px) / k.fy_px);
  const double k1 = k.distortion[0], k2 = k.distortion[1], p1 = k.distortion[2],
               p2 = k.distortion[3], k3 = k.distortion[4];
  Eigen::Vector2d xy = target;
  constexpr int kMaxIterations = 50;
  constexpr double kStepTolerance = 1e-14;
  for (int iteration = 0; iteration < kMaxIterations; ++iteration) {
    const double x = xy.x(), y = xy.y();
    const double r2 = x * x + y * y;
    const double radial = 1.0 + r2 * (k1 + r2 * (k2 + r2 * k3));
    const double radial_d = k1 + r2 * (2.0 * k2 + 3.0 * k3 * r2);
    const Eigen::Vector2d distorted(x * radial + 2.0 * p1 * x * y + p2 * (r2 + 2.0 * x * x),
                                    y * radial + p1 * (r2 + 2.0 * y * y) + 2.0 * p2 * x * y);
    Eigen::Matrix2d jacobian;
    jacobian(0, 0) = radial + 2.0 * x * x * radial_d + 2.0 * p1 * y + 6.0 * p2 * x;
    jacobian(0, 1) = 2.0 * x * y * radial_d + 2.0 * p1 * x + 2.0 * p2 * y;
    jacobian(1, 0) = jacobian(0, 1);
    jacobian(1, 1) = radial + 2.0 * y * y * radial_d + 6.0 * p1 * y + 2.0 * p2 * x;
    const Eigen::Vector2d step = jacobian.partialPivLu().solve(target - distorted);
    if (!step.allFinite()) break;
    xy += step;
    if (step.norm() < kStepTolerance * (1.0 + xy.norm())) break;
  }
  return xy;
}

std::string SensorWindowProblem(const CameraIntrinsics& full, const SensorWindow& window) {
  const Eigen::Vector2d end = window.offset_px + window.size_px.cast<double>();
  if (window.offset_px.minCoeff() < 0 || end.x() > full.width_px || end.y() > full.height_px) {
    return fmt::format(
        "a window inside the full frame image_size [{}, {}] (offset [{}, {}] + size [{}, {}] "
        "reaches [{}, {}])",
        full.width_px, full.height_px, window.offset_px.x(), window.offset_px.y(),
        window.size_px.x(), window.size_px.y(), end.x(), end.y());
  }
  return "";
}

void ApplySensorWindow(const SensorWindow& window, Camera* camera) {
  CameraIntrinsics& k = camera->intrinsics;
  SensorWindow applied = window;
  applied.full_size_px = Eigen::Vector2i(k.width_px, k.height_px);
  k.cx_px -= window.offset_px.x();
  k.cy_px -= window.offset_px.y();
  k.width_px = window.size_px.x();
  k.height_px = window.size_px.y();
  camera->sensor_window = applied;
}

// camera.yaml: see docs/files.md. With a sensor_window, image_size, cx and cy in
// the file are those of the full-frame calibration; the window's offset is subtracted here
// and its size becomes the image size, so that the intrinsics in memory describe the
// recorded (cropped) image.
Camera ReadCameraYaml(const std::filesystem::path& path) {
  YamlMap map = YamlMap::LoadFile(path);
  Camera camera;
  CameraIntrinsics& k = camera.intrinsics;
  const Eigen::Vector2i size =
      ReadPixelCount(map, "image_size", "[width, height] as two positive whole numbers of pixels");
  k.width_px = size.x();
  k.height_px = size.y();
  k.fx_px = map.Number("fx", "a positive number in pixels");
  if (!(k.fx_px > 0)) map.Fail("fx", "a positive number in pixels");
  k.fy_px = map.Number("fy", "a positive number in pixels");
  if (!(k.fy_px > 0)) map.Fail("fy", "a positive number in pixels");
  k.cx_px = map.Number("cx", "a number in pixels");
  k.cy_px = map.Number("cy", "a number in pixels");

  // Brown-Conrady k1 k2 p1 p2 [k3]; four terms (k3 = 0) are common in calibration files.
  const std::string distortion_expected = "a list of 5 numbers k1 k2 p1 p2 k3 (or 4, k3 = 0)";
  const std::vector<double> distortion = map.Numbers("distortion", -1, distortion_expected);
  if (distortion.size() != 4 && distortion.size() != 5) map.Fail("distortion", distortion_expected);
  for (size_t i = 0; i < distortion.size(); ++i) k.distortion[i] = distortion[i];

  if (map.Has("world_to_camera")) {
    YamlMap pose = map.Map("world_to_camera");
    RigidTransform transform;
    const std::string rotation_expected =
        "a rotation matrix (three rows of three numbers, orthonormal with determinant +1 "
        "within 1e-6)";
    const Eigen::Matrix3d rotation = pose.Matrix3("rotation", rotation_expected);
    const double orthonormality_error =
        (rotation.transpose() * rotation - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff();
    if (orthonormality_error > kRotationTolerance ||
        std::abs(rotation.determinant() - 1.0) > kRotationTolerance) {
      pose.Fail("rotation", rotation_expected);
    }
    // A matrix rounded in the file is replaced by the nearest rotation (polar decomposition
    // R = U V^T of R = U S V^T); one that is orthonormal to double precision is kept as is.
    transform.rotation = rotation;
    if (orthonormality_error > kExactRotationTolerance) {
      const Eigen::JacobiSVD<Eigen::Matrix3d> svd(rotation,
                                                  Eigen::ComputeFullU | Eigen::ComputeFullV);
      transform.rotation = svd.matrixU() * svd.matrixV().transpose();
    }
    transform.translation_m = pose.Vector3("translation_m", "a list of 3 numbers in metres");
    pose.Finish();
    camera.camera_from_world = transform;
  }

  if (map.Has("sensor_window")) {
    YamlMap window_map = map.Map("sensor_window");
    SensorWindow window;
    const std::vector<double> offset = window_map.Numbers(
        "offset_px", 2, "[x, y] of the window's top-left pixel on the sensor, whole pixels >= 0");
    for (double v : offset) {
      if (v < 0 || v != std::floor(v)) {
        window_map.Fail("offset_px", "[x, y] of the window's top-left pixel on the sensor, whole "
                                     "pixels >= 0");
      }
    }
    window.offset_px = Eigen::Vector2d(offset[0], offset[1]);
    window.size_px = ReadPixelCount(window_map, "size_px",
                                    "[width, height] as two positive whole numbers of pixels");
    if (const std::string problem = SensorWindowProblem(k, window); !problem.empty()) {
      window_map.Fail("size_px", problem);
    }
    window_map.Finish();
    ApplySensorWindow(window, &camera);
  }
  map.Finish();
  return camera;
}

void WriteCameraYaml(const Camera& camera, const std::filesystem::path& path,
                     const std::string& comment) {
  const CameraIntrinsics& k = camera.intrinsics;
  // The file holds the full-frame principal point when a window is given (see ReadCameraYaml).
  const Eigen::Vector2d offset_px =
      camera.sensor_window ? camera.sensor_window->offset_px : Eigen::Vector2d::Zero();
  // (A window without its full frame: the smallest full frame that holds it.)
  Eigen::Vector2i full_size_px(k.width_px, k.height_px);
  if (camera.sensor_window) {
    full_size_px = camera.sensor_window->full_size_px;
    if (full_size_px.minCoeff() <= 0) full_size_px += offset_px.cast<int>();
  }
  WriteFileAtomically(path, [&](std::ostream& out) {
    std::istringstream lines(comment);
    for (std::string line; std::getline(lines, line);) out << "# " << line << "\n";
    out << fmt::format("image_size: [{}, {}]\n", full_size_px.x(), full_size_px.y());
    out << "fx: " << Num(k.fx_px) << "\n";
    out << "fy: " << Num(k.fy_px) << "\n";
    out << "cx: " << Num(k.cx_px + offset_px.x()) << "\n";
    out << "cy: " << Num(k.cy_px + offset_px.y()) << "\n";
    out << fmt::format("distortion: [{}, {}, {}, {}, {}]  # k1 k2 p1 p2 k3\n", Num(k.distortion[0]),
                       Num(k.distortion[1]), Num(k.distortion[2]), Num(k.distortion[3]),
                       Num(k.distortion[4]));
    if (camera.camera_from_world) {
      const Eigen::Matrix3d& r = camera.camera_from_world->rotation;
      const Eigen::Vector3d& t = camera.camera_from_world->translation_m;
      out << "world_to_camera:  # x_camera = rotation * x_world + translation_m\n";
      out << "  rotation:";
      for (int row = 0; row < 3; ++row) {
        out << fmt::format("\n    - [{}, {}, {}]", Num(r(row, 0)), Num(r(row, 1)), Num(r(row, 2)));
      }
      out << fmt::format("\n  translation_m: [{}, {}, {}]\n", Num(t.x()), Num(t.y()), Num(t.z()));
    }
    if (camera.sensor_window) {
      const SensorWindow& window = *camera.sensor_window;
      out << fmt::format("sensor_window: {{offset_px: [{}, {}], size_px: [{}, {}]}}\n",
                         Num(window.offset_px.x()), Num(window.offset_px.y()), window.size_px.x(),
                         window.size_px.y());
    }
  });
}

}  // namespace tumbletrace
