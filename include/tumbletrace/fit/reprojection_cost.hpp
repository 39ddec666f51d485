// The residual of one marker seen in one frame by one camera, in pixels:
//   e = pi(K, D, camera_from_world (r(t) + R(t) (m - c))) - u_observed,
//   t = t_frame + offset (the camera's clock offset)
// with pi the pinhole projection with Brown-Conrady distortion (model/camera.hpp), r(t) and
// R(t) from the translation and rotation models (fit/flight_model.hpp, fit/torque_free.hpp).
#pragma once

#include <ceres/autodiff_cost_function.h>

#include <Eigen/Core>
#include <memory>

#include "tumbletrace/fit/aero_trajectory.hpp"
#include "tumbletrace/fit/flight_model.hpp"
#include "tumbletrace/fit/torque_free_rotation.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

// The part every rotation model shares: from the CM's position and the body's orientation
// to the pixel residual. False when the point is behind the camera.
template <typename T>
bool MarkerPixelResidual(const T* r_world_m, const T* q_world_from_body,
                         const double* marker_body_m, const T* cm_body_m,
                         const CameraIntrinsics& intrinsics,
                         const RigidTransform& camera_from_world, const Eigen::Vector2d& observed_px,
                         T* residual_px) {
  T x_world_m[3];
  MarkerWorldPosition(r_world_m, q_world_from_body, marker_body_m, cm_body_m, x_world_m);
  T x_camera_m[3];
  for (int i = 0; i < 3; ++i) {
    x_camera_m[i] = T(camera_from_world.translation_m[i]);
    for (int j = 0; j < 3; ++j) {
      x_camera_m[i] += T(camera_from_world.rotation(i, j)) * x_world_m[j];
    }
  }
  T pixel[2];
  if (!ProjectCameraPoint(intrinsics, x_camera_m, pixel)) return false;
  residual_px[0] = pixel[0] - T(observed_px.x());
  residual_px[1] = pixel[1] - T(observed_px.y());
  return true;
}

// What every residual knows of its sighting.
struct SightingGeometry {
  Eigen::Vector2d observed_px;
  Eigen::Vector3d marker_body_m;
  double dt_s = 0.0;  // frame time - t0, before the camera's clock offset
  CameraIntrinsics intrinsics;
  RigidTransform camera_from_world;
};

// Constant spin (or any closed-form rotation model with blocks q0, w).
// Parameter blocks: r0 (3), v0 (3), g (3), q0 (4), w (3), c (3), offset (1).
template <class Translation = BallisticTranslation, class Rotation = ConstantSpinRotation>
class MarkerReprojectionCost {
 public:
  explicit MarkerReprojectionCost(SightingGeometry geometry) : g_(std::move(geometry)) {}

  template <typename T>
  bool operator()(const T* r0_world_m, const T* v0_world_mps, const T* g_world_mps2,
                  const T* q0_world_from_body, const T* omega_world_radps, const T* cm_body_m,
                  const T* offset_s, T* residual_px) const {
    const T dt = T(g_.dt_s) + offset_s[0];
    T r_world_m[3];
    Translation::Position(r0_world_m, v0_world_mps, g_world_mps2, dt, r_world_m);
    T q[4];
    Rotation::Orientation(q0_world_from_body, omega_world_radps, dt, q);
    return MarkerPixelResidual(r_world_m, q, g_.marker_body_m.data(), cm_body_m, g_.intrinsics,
                               g_.camera_from_world, g_.observed_px, residual_px);
  }

  static ceres::CostFunction* Create(SightingGeometry geometry) {
    return new ceres::AutoDiffCostFunction<MarkerReprojectionCost, 2, 3, 3, 3, 4, 3, 3, 1>(
        new MarkerReprojectionCost(std::move(geometry)));
  }

 private:
  SightingGeometry g_;
};

// Torque-free rotation with unequal moments (fit/torque_free_rotation.hpp).
// Parameter blocks: r0 (3), v0 (3), g (3), q0 (4), w (3, world, at t0), c (3), offset (1),
// p (4, body from principal), moments (2: s, d). `sample` indexes the trajectory's times.
template <class Translation = BallisticTranslation>
class TorqueFreeReprojectionCost {
 public:
  TorqueFreeReprojectionCost(SightingGeometry geometry,
                             std::shared_ptr<TorqueFreeTrajectory> trajectory, int sample)
      : g_(std::move(geometry)), trajectory_(std::move(trajectory)), sample_(sample) {}

  template <typename T>
  bool operator()(const T* r0_world_m, const T* v0_world_mps, const T* g_world_mps2,
                  const T* q0_world_from_body, const T* omega_world_radps, const T* cm_body_m,
                  const T* offset_s, const T* body_from_principal, const T* moments_sd,
                  T* residual_px) const {
    T q[4];
    TorqueFreeOrientation(q0_world_from_body, omega_world_radps, body_from_principal,
                          moments_sd, offset_s[0], *trajectory_, sample_, q);
    const T dt = T(g_.dt_s) + offset_s[0];
    T r_world_m[3];
    Translation::Position(r0_world_m, v0_world_mps, g_world_mps2, dt, r_world_m);
    return MarkerPixelResidual(r_world_m, q, g_.marker_body_m.data(), cm_body_m, g_.intrinsics,
                               g_.camera_from_world, g_.observed_px, residual_px);
  }

  static ceres::CostFunction* Create(SightingGeometry geometry,
                                     std::shared_ptr<TorqueFreeTrajectory> trajectory,
                                     int sample) {
    return new ceres::AutoDiffCostFunction<TorqueFreeReprojectionCost, 2, 3, 3, 3, 4, 3, 3, 1, 4,
                                           2>(
        new TorqueFreeReprojectionCost(std::move(geometry), std::move(trajectory), sample));
  }

 private:
  SightingGeometry g_;
  std::shared_ptr<TorqueFreeTrajectory> trajectory_;
  int sample_;
};

// Flight through air (fit/aero.hpp) with the constant-spin rotation.
// Parameter blocks: r0 (3), v0 (3), g (3), q0 (4), w (3), c (3), offset (1), aero (2: k, k_L).
class AeroReprojectionCost {
 public:
  AeroReprojectionCost(SightingGeometry geometry, std::shared_ptr<AeroTrajectory> path, int sample)
      : g_(std::move(geometry)), path_(std::move(path)), sample_(sample) {}

  template <typename T>
  bool operator()(const T* r0_world_m, const T* v0_world_mps, const T* g_world_mps2,
                  const T* q0_world_from_body, const T* omega_world_radps, const T* cm_body_m,
                  const T* offset_s, const T* aero, T* residual_px) const {
    T r_world_m[3];
    AeroPosition(r0_world_m, v0_world_mps, g_world_mps2, aero, omega_world_radps, offset_s[0],
                 *path_, sample_, r_world_m);
    const T dt = T(g_.dt_s) + offset_s[0];
    T q[4];
    ConstantSpinRotation::Orientation(q0_world_from_body, omega_world_radps, dt, q);
    return MarkerPixelResidual(r_world_m, q, g_.marker_body_m.data(), cm_body_m, g_.intrinsics,
                               g_.camera_from_world, g_.observed_px, residual_px);
  }

  static ceres::CostFunction* Create(SightingGeometry geometry,
                                     std::shared_ptr<AeroTrajectory> path, int sample) {
    return new ceres::AutoDiffCostFunction<AeroReprojectionCost, 2, 3, 3, 3, 4, 3, 3, 1, 2>(
        new AeroReprojectionCost(std::move(geometry), std::move(path), sample));
  }

 private:
  SightingGeometry g_;
  std::shared_ptr<AeroTrajectory> path_;
  int sample_;
};

// Flight through air with the torque-free rotation.
// Parameter blocks: those of TorqueFreeReprojectionCost, then aero (2: k, k_L).
class AeroTorqueFreeReprojectionCost {
 public:
  AeroTorqueFreeReprojectionCost(SightingGeometry geometry,
                                 std::shared_ptr<TorqueFreeTrajectory> rotation,
                                 std::shared_ptr<AeroTrajectory> path, int sample)
      : g_(std::move(geometry)), rotation_(std::move(rotation)), path_(std::move(path)),
        sample_(sample) {}

  template <typename T>
  bool operator()(const T* r0_world_m, const T* v0_world_mps, const T* g_world_mps2,
                  const T* q0_world_from_body, const T* omega_world_radps, const T* cm_body_m,
                  const T* offset_s, const T* body_from_principal, const T* moments_sd,
                  const T* aero, T* residual_px) const {
    T q[4];
    TorqueFreeOrientation(q0_world_from_body, omega_world_radps, body_from_principal,
                          moments_sd, offset_s[0], *rotation_, sample_, q);
    T r_world_m[3];
    AeroPosition(r0_world_m, v0_world_mps, g_world_mps2, aero, omega_world_radps, offset_s[0],
                 *path_, sample_, r_world_m);
    return MarkerPixelResidual(r_world_m, q, g_.marker_body_m.data(), cm_body_m, g_.intrinsics,
                               g_.camera_from_world, g_.observed_px, residual_px);
  }

  static ceres::CostFunction* Create(SightingGeometry geometry,
                                     std::shared_ptr<TorqueFreeTrajectory> rotation,
                                     std::shared_ptr<AeroTrajectory> path, int sample) {
    return new ceres::AutoDiffCostFunction<AeroTorqueFreeReprojectionCost, 2, 3, 3, 3, 4, 3, 3,
                                           1, 4, 2, 2>(new AeroTorqueFreeReprojectionCost(
        std::move(geometry), std::move(rotation), std::move(path), sample));
  }

 private:
  SightingGeometry g_;
  std::shared_ptr<TorqueFreeTrajectory> rotation_;
  std::shared_ptr<AeroTrajectory> path_;
  int sample_;
};

}  // namespace tumbletrace
