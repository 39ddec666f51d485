// The residual of one marker seen in one frame, in pixels:
//   e = pi(K, D, camera_from_world (r(t) + R(t) (m - c))) - u_observed
// with pi the pinhole projection with Brown-Conrady distortion (model/camera.hpp), r(t) and
// R(t) from the translation and rotation models (fit/flight_model.hpp).
#pragma once

#include <ceres/autodiff_cost_function.h>

#include <Eigen/Core>

#include "tumbletrace/fit/flight_model.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

template <class Translation = BallisticTranslation, class Rotation = ConstantSpinRotation>
class MarkerReprojectionCost {
 public:
  MarkerReprojectionCost(const Eigen::Vector2d& observed_px, const Eigen::Vector3d& marker_body_m,
                         double dt_s, const CameraIntrinsics& intrinsics,
                         const RigidTransform& camera_from_world)
      : observed_px_(observed_px),
        marker_body_m_(marker_body_m),
        dt_s_(dt_s),
        intrinsics_(intrinsics),
        camera_from_world_(camera_from_world) {}

  // Parameter blocks: r0 (3), v0 (3), g (3), q0 (4), w (3), c (3).
  template <typename T>
  bool operator()(const T* r0_world_m, const T* v0_world_mps, const T* g_world_mps2,
                  const T* q0_world_from_body, const T* omega_world_radps, const T* cm_body_m,
                  T* residual_px) const {
    T r_world_m[3];
    Translation::Position(r0_world_m, v0_world_mps, g_world_mps2, dt_s_, r_world_m);
    T q[4];
    Rotation::Orientation(q0_world_from_body, omega_world_radps, dt_s_, q);
    T x_world_m[3];
    MarkerWorldPosition(r_world_m, q, marker_body_m_.data(), cm_body_m, x_world_m);
    T x_camera_m[3];
    for (int i = 0; i < 3; ++i) {
      x_camera_m[i] = T(camera_from_world_.translation_m[i]);
      for (int j = 0; j < 3; ++j) {
        x_camera_m[i] += T(camera_from_world_.rotation(i, j)) * x_world_m[j];
      }
    }
    T pixel[2];
    if (!ProjectCameraPoint(intrinsics_, x_camera_m, pixel)) return false;
    residual_px[0] = pixel[0] - T(observed_px_.x());
    residual_px[1] = pixel[1] - T(observed_px_.y());
    return true;
  }

  static ceres::CostFunction* Create(const Eigen::Vector2d& observed_px,
                                     const Eigen::Vector3d& marker_body_m, double dt_s,
                                     const CameraIntrinsics& intrinsics,
                                     const RigidTransform& camera_from_world) {
    return new ceres::AutoDiffCostFunction<MarkerReprojectionCost, 2, 3, 3, 3, 4, 3, 3>(
        new MarkerReprojectionCost(observed_px, marker_body_m, dt_s, intrinsics,
                                   camera_from_world));
  }

 private:
  Eigen::Vector2d observed_px_;
  Eigen::Vector3d marker_body_m_;
  double dt_s_;
  CameraIntrinsics intrinsics_;
  RigidTransform camera_from_world_;
};

}  // namespace tumbletrace
