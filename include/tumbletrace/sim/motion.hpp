// Numerical integration of a thrown rigid body, independent of the fit's closed forms:
// the simulator's ground truth comes from here, so that the fit is checked against
// something it does not share.
//
//   translation:  r' = v,  v' = a(r, v)            (a = g in vacuum)
//   rotation:     I w' = -w x (I w)                  (Euler's equations, body frame, about
//                 q' = q (x) [0, w] / 2              the CM; w in the body frame)
// integrated by the classical fourth-order Runge-Kutta method with a fixed step, the
// quaternion renormalised after each step.
#pragma once

#include <Eigen/Core>
#include <Eigen/Geometry>
#include <functional>

namespace tumbletrace {

struct RigidState {
  Eigen::Vector3d cm_world_m = Eigen::Vector3d::Zero();
  Eigen::Vector3d velocity_world_mps = Eigen::Vector3d::Zero();
  Eigen::Quaterniond world_from_body = Eigen::Quaterniond::Identity();
  Eigen::Vector3d omega_body_radps = Eigen::Vector3d::Zero();
};

// The CM's acceleration as a function of position, velocity and the body's angular
// velocity (world frame, m/s^2): gravity, and the air's drag and lift.
using AccelerationField = std::function<Eigen::Vector3d(
    const Eigen::Vector3d& r_m, const Eigen::Vector3d& v_mps, const Eigen::Vector3d& w_world_radps)>;

class RigidBodyIntegrator {
 public:
  // `inertia_body_kgm2` about the CM in body axes (any positive-definite tensor; only its
  // ratios matter). `max_step_s` bounds the RK4 step. `angular_acceleration_body_radps2`
  // adds a constant angular acceleration (body frame) to Euler's equations: a torque, such
  // as a hand's before release.
  RigidBodyIntegrator(const Eigen::Matrix3d& inertia_body_kgm2, AccelerationField acceleration,
                      double max_step_s,
                      const Eigen::Vector3d& angular_acceleration_body_radps2 = Eigen::Vector3d::Zero());

  // The state `duration_s` later (negative: earlier; the equations are reversible).
  RigidState Advance(const RigidState& state, double duration_s) const;

  // Rotational kinetic energy E = w.Iw / 2 (in the tensor's units) and the world angular
  // momentum L = R I w, the invariants of torque-free motion.
  double RotationalEnergy(const RigidState& state) const;
  Eigen::Vector3d AngularMomentumWorld(const RigidState& state) const;

 private:
  RigidState Step(const RigidState& state, double h) const;

  Eigen::Matrix3d inertia_;
  Eigen::Matrix3d inertia_inverse_;
  AccelerationField acceleration_;
  double max_step_s_;
  Eigen::Vector3d angular_acceleration_;
};

}  // namespace tumbletrace
