// The camera: pinhole with Brown-Conrady distortion and an optional pose in the world.
//
// Projection (OpenCV calib3d documentation, "Camera Calibration and 3D Reconstruction"):
//   x = X/Z, y = Y/Z, r^2 = x^2 + y^2
//   x_d = x (1 + k1 r^2 + k2 r^4 + k3 r^6) + 2 p1 x y + p2 (r^2 + 2 x^2)
//   y_d = y (1 + k1 r^2 + k2 r^4 + k3 r^6) + p1 (r^2 + 2 y^2) + 2 p2 x y
//   u = fx x_d + cx,  v = fy y_d + cy
// Pixel coordinates are those of the original (distorted) image with the origin at the
// centre of the top-left pixel, as in OpenCV.
#pragma once

#include <Eigen/Core>
#include <Eigen/Geometry>
#include <array>
#include <filesystem>
#include <optional>
#include <string>

namespace tumbletrace {

// A cropped sensor read-out of a full-frame calibration (high-speed cameras at high rates).
// The calibration (image_size, cx, cy) is of the full frame; the recorded image is the
// window: cx -= offset x, cy -= offset y, and the image size is the window's.
struct SensorWindow {
  Eigen::Vector2d offset_px = Eigen::Vector2d::Zero();  // top-left of the window on the sensor
  Eigen::Vector2i size_px = Eigen::Vector2i::Zero();    // width, height of the window
  Eigen::Vector2i full_size_px = Eigen::Vector2i::Zero();  // the full frame (image_size)
};

struct CameraIntrinsics {
  int width_px = 0;
  int height_px = 0;
  double fx_px = 0.0;
  double fy_px = 0.0;
  double cx_px = 0.0;  // principal point in the image as recorded (window already applied)
  double cy_px = 0.0;
  std::array<double, 5> distortion = {0, 0, 0, 0, 0};  // k1 k2 p1 p2 k3, dimensionless
};

// x_camera = camera_from_world_rotation * x_world + camera_from_world_translation_m
struct RigidTransform {
  Eigen::Matrix3d rotation = Eigen::Matrix3d::Identity();
  Eigen::Vector3d translation_m = Eigen::Vector3d::Zero();

  Eigen::Vector3d Apply(const Eigen::Vector3d& x) const { return rotation * x + translation_m; }
  RigidTransform Inverse() const {
    return {rotation.transpose(), -(rotation.transpose() * translation_m)};
  }
};

struct Camera {
  CameraIntrinsics intrinsics;
  // Absent: the camera frame is the world frame (the fit then estimates gravity's direction).
  std::optional<RigidTransform> camera_from_world;
  std::optional<SensorWindow> sensor_window;  // as read; already folded into cx, cy and size
};

// Empty when `window` lies inside the full frame of `full` intrinsics (offset >= 0 whole
// pixels, offset + size <= the full size); otherwise what is wrong, in words.
std::string SensorWindowProblem(const CameraIntrinsics& full, const SensorWindow& window);
// Applies a window to a full-frame calibration: shifts the principal point and sets the image
// size to the window's (model/camera.cpp). The caller has checked SensorWindowProblem.
void ApplySensorWindow(const SensorWindow& window, Camera* camera);

// Projects a point in the camera frame to distorted pixels. Templated so that Ceres can
// differentiate through it. Returns false when the point is not in front of the camera.
template <typename T>
bool ProjectCameraPoint(const CameraIntrinsics& k, const T* p_camera, T* pixel) {
  if (!(p_camera[2] > T(0))) return false;
  const T x = p_camera[0] / p_camera[2];
  const T y = p_camera[1] / p_camera[2];
  const T r2 = x * x + y * y;
  const double k1 = k.distortion[0], k2 = k.distortion[1], p1 = k.distortion[2],
               p2 = k.distortion[3], k3 = k.distortion[4];
  const T radial = T(1) + r2 * (T(k1) + r2 * (T(k2) + r2 * T(k3)));
  const T xd = x * radial + T(2.0 * p1) * x * y + T(p2) * (r2 + T(2) * x * x);
  const T yd = y * radial + T(p1) * (r2 + T(2) * y * y) + T(2.0 * p2) * x * y;
  pixel[0] = T(k.fx_px) * xd + T(k.cx_px);
  pixel[1] = T(k.fy_px) * yd + T(k.cy_px);
  return true;
}

// World point to pixels through the camera's pose (identity when the camera has none).
bool ProjectWorldPoint(const Camera& camera, const Eigen::Vector3d& p_world_m,
                       Eigen::Vector2d* pixel);

// Removes the distortion of a pixel: returns the normalised image point (x, y) = (X/Z, Y/Z)
// by Gauss-Newton on the forward model. Used by initialisation.
Eigen::Vector2d UndistortToNormalised(const CameraIntrinsics& k, const Eigen::Vector2d& pixel);

// camera.yaml (docs/files.md). Throws InputError naming file and key.
Camera ReadCameraYaml(const std::filesystem::path& path);
// `comment` (may be empty): lines written first, each as a YAML comment ("# ...").
void WriteCameraYaml(const Camera& camera, const std::filesystem::path& path,
                     const std::string& comment = "");

}  // namespace tumbletrace
