// The free-flight model: where the CM is and how the body is turned at a time t.
//
// Each model is a struct of static, scalar-templated functions of its parameter blocks, so
// that the same code serves the Ceres residuals (T = ceres::Jet), the initialisation, the
// report and the tests (T = double). Times are taken relative to the reference time t0 of
// the fit, dt = t - t0, chosen near the middle of the data so that the position, velocity
// and acceleration parameters are nearly uncorrelated.
//
// Conventions: quaternions are [w, x, y, z] (Ceres' order), unit, and rotate body
// vectors into the world: x_world = R(q) x_body. Angular velocities are in rad/s.
#pragma once

#include <ceres/rotation.h>

namespace tumbletrace {

// Translation of the CM in vacuum under constant gravity g (world frame):
//   r(t) = r0 + v0 dt + g dt^2 / 2,   v(t) = v0 + g dt
// Parameter blocks: r0 [m], v0 [m/s], g [m/s^2], all at t0 in the world frame.
struct BallisticTranslation {
  // dt may be a plain double or a T (a camera's clock offset being estimated).
  template <typename T, typename D>
  static void Position(const T* r0_world_m, const T* v0_world_mps, const T* g_world_mps2,
                       const D& dt_s, T* r_world_m) {
    for (int i = 0; i < 3; ++i) {
      r_world_m[i] = r0_world_m[i] + v0_world_mps[i] * dt_s +
                     (0.5 * dt_s * dt_s) * g_world_mps2[i];
    }
  }
  template <typename T>
  static void Velocity(const T* v0_world_mps, const T* g_world_mps2, double dt_s,
                       T* v_world_mps) {
    for (int i = 0; i < 3; ++i) v_world_mps[i] = v0_world_mps[i] + g_world_mps2[i] * dt_s;
  }
};

// Rotation with a constant angular velocity w in the world frame:
//   R(t) = Exp([w]x dt) R0
// Exact torque-free motion for a spin about a principal axis (and so for any planar
// spin of a body whose plane of motion is a principal plane): then w is fixed in the body
// too and the angular momentum L = I w is parallel to w (Landau & Lifshitz, Mechanics,
// section 36 — from memory; it follows from Euler's equations with w parallel to I w).
// Parameter blocks: q0 (unit quaternion, body to world at t0), w [rad/s, world].
struct ConstantSpinRotation {
  template <typename T, typename D>
  static void Orientation(const T* q0_world_from_body, const T* omega_world_radps,
                          const D& dt_s, T* q_world_from_body) {
    const T angle_axis[3] = {omega_world_radps[0] * dt_s, omega_world_radps[1] * dt_s,
                             omega_world_radps[2] * dt_s};
    T dq[4];
    ceres::AngleAxisToQuaternion(angle_axis, dq);
    ceres::QuaternionProduct(dq, q0_world_from_body, q_world_from_body);
  }
  template <typename T>
  static void AngularVelocityWorld(const T* omega_world_radps, double /*dt_s*/,
                                   T* omega_out_world_radps) {
    for (int i = 0; i < 3; ++i) omega_out_world_radps[i] = omega_world_radps[i];
  }
};

// A marker's world position: x = r(t) + R(t) (m - c), with m the marker and c the CM,
// both in the body frame.
template <typename T>
void MarkerWorldPosition(const T* r_world_m, const T* q_world_from_body,
                         const double* marker_body_m, const T* cm_body_m, T* x_world_m) {
  const T offset_body[3] = {T(marker_body_m[0]) - cm_body_m[0],
                            T(marker_body_m[1]) - cm_body_m[1],
                            T(marker_body_m[2]) - cm_body_m[2]};
  T offset_world[3];
  ceres::UnitQuaternionRotatePoint(q_world_from_body, offset_body, offset_world);
  for (int i = 0; i < 3; ++i) x_world_m[i] = r_world_m[i] + offset_world[i];
}

}  // namespace tumbletrace
