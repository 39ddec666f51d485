// The body's orientation under torque-free rotation with unequal moments, for any scalar:
//   q(t) = q0 (x) p (x) u(tau) (x) p*,   tau = t - t0 (+ the camera's clock offset)
// with p the principal frame in the body (body from principal) and u from the trajectory
// (principal frame at t into that at t0), whose inputs are the angular velocity at t0 in
// the principal frame, w_p = (q0 (x) p)* w (x) (q0 (x) p), and the moments (s - d, s + d, 1).
#pragma once

#include <ceres/rotation.h>

#include "tumbletrace/fit/chain_rule.hpp"
#include "tumbletrace/fit/torque_free_trajectory.hpp"

namespace tumbletrace {

// `offset_s` is the camera's clock offset (a parameter) or T(0); `trajectory` is sampled
// at the times of the fit and `sample` indexes this one.
template <typename T>
void TorqueFreeOrientation(const T* q0_world_from_body, const T* omega_world_radps,
                           const T* body_from_principal, const T* moments_sd, const T& offset_s,
                           TorqueFreeTrajectory& trajectory, int sample,
                           T* q_world_from_body) {
  constexpr int n = TorqueFreeTrajectory::kInputs;
  T q_world_principal[4];
  ceres::QuaternionProduct(q0_world_from_body, body_from_principal, q_world_principal);
  const T q_principal_world[4] = {q_world_principal[0], -q_world_principal[1],
                                  -q_world_principal[2], -q_world_principal[3]};
  T inputs[n + 1];
  ceres::UnitQuaternionRotatePoint(q_principal_world, omega_world_radps, inputs);
  inputs[3] = moments_sd[0];
  inputs[4] = moments_sd[1];
  inputs[5] = offset_s;
  const double w0[3] = {ValueOf(inputs[0]), ValueOf(inputs[1]), ValueOf(inputs[2])};
  const double sd[2] = {ValueOf(inputs[3]), ValueOf(inputs[4])};
  trajectory.Update(w0, sd, ValueOf(inputs[5]));
  const TorqueFreeTrajectory::Sample& s = trajectory.sample(sample);
  T u[4];
  for (int k = 0; k < 4; ++k) {
    double gradient[n + 1];
    for (int j = 0; j < n; ++j) gradient[j] = s.du[k][j];
    gradient[n] = s.u_dot[k];
    u[k] = Chained(s.u[k], gradient, inputs, n + 1);
  }
  T q_world_principal_t[4];
  ceres::QuaternionProduct(q_world_principal, u, q_world_principal_t);
  const T principal_from_body[4] = {body_from_principal[0], -body_from_principal[1],
                                    -body_from_principal[2], -body_from_principal[3]};
  ceres::QuaternionProduct(q_world_principal_t, principal_from_body, q_world_from_body);
}

}  // namespace tumbletrace
