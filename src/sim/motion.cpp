#include "tumbletrace/sim/motion.hpp"

#include <cmath>
#include <stdexcept>

namespace tumbletrace {
namespace {

// The state's time derivative, with the quaternion derivative as 4 coefficients.
struct Derivative {
  Eigen::Vector3d dr, dv;
  Eigen::Vector4d dq;  // w x y z
  Eigen::Vector3d dw;
};

Eigen::Vector4d Wxyz(const Eigen::Quaterniond& q) { return {q.w(), q.x(), q.y(), q.z()}; }

Eigen::Quaterniond FromWxyz(const Eigen::Vector4d& v) {
  return Eigen::Quaterniond(v[0], v[1], v[2], v[3]);
}

}  // namespace

RigidBodyIntegrator::RigidBodyIntegrator(const Eigen::Matrix3d& inertia_body_kgm2,
                                         AccelerationField acceleration, double max_step_s,
                                         const Eigen::Vector3d& angular_acceleration_body_radps2)
    : inertia_(inertia_body_kgm2),
      inertia_inverse_(inertia_body_kgm2.inverse()),
      acceleration_(std::move(acceleration)),
      max_step_s_(max_step_s),
      angular_acceleration_(angular_acceleration_body_radps2) {
  if (!(max_step_s > 0)) throw std::invalid_argument("RigidBodyIntegrator: step must be > 0");
}

RigidState RigidBodyIntegrator::Step(const RigidState& s, double h) const {
  auto derivative = [&](const Eigen::Vector3d& r, const Eigen::Vector3d& v,
                        const Eigen::Vector4d& q, const Eigen::Vector3d& w) {
    Derivative d;
    d.dr = v;
    // q' = q (x) [0, w] / 2 with w in the body frame.
    const Eigen::Quaterniond qq = FromWxyz(q);
    d.dv = acceleration_(r, v, qq.normalized() * w);
    const Eigen::Quaterniond wq(0.0, w.x(), w.y(), w.z());
    d.dq = 0.5 * Wxyz(qq * wq);
    // Euler's equations: I w' = -w x (I w).
    d.dw = -inertia_inverse_ * w.cross(inertia_ * w) + angular_acceleration_;
    return d;
  };
  const Eigen::Vector3d r = s.cm_world_m, v = s.velocity_world_mps, w = s.omega_body_radps;
  const Eigen::Vector4d q = Wxyz(s.world_from_body);
  const Derivative k1 = derivative(r, v, q, w);
  const Derivative k2 = derivative(r + 0.5 * h * k1.dr, v + 0.5 * h * k1.dv,
                                   q + 0.5 * h * k1.dq, w + 0.5 * h * k1.dw);
  const Derivative k3 = derivative(r + 0.5 * h * k2.dr, v + 0.5 * h * k2.dv,
                                   q + 0.5 * h * k2.dq, w + 0.5 * h * k2.dw);
  const Derivative k4 =
      derivative(r + h * k3.dr, v + h * k3.dv, q + h * k3.dq, w + h * k3.dw);
  RigidState out;
  out.cm_world_m = r + h / 6.0 * (k1.dr + 2 * k2.dr + 2 * k3.dr + k4.dr);
  out.velocity_world_mps = v + h / 6.0 * (k1.dv + 2 * k2.dv + 2 * k3.dv + k4.dv);
  out.world_from_body =
      FromWxyz(q + h / 6.0 * (k1.dq + 2 * k2.dq + 2 * k3.dq + k4.dq)).normalized();
  out.omega_body_radps = w + h / 6.0 * (k1.dw + 2 * k2.dw + 2 * k3.dw + k4.dw);
  return out;
}

RigidState RigidBodyIntegrator::Advance(const RigidState& state, double duration_s) const {
  if (duration_s == 0) return state;
  const int steps = static_cast<int>(std::ceil(std::abs(duration_s) / max_step_s_));
  const double h = duration_s / steps;
  RigidState s = state;
  for (int i = 0; i < steps; ++i) s = Step(s, h);
  return s;
}

double RigidBodyIntegrator::RotationalEnergy(const RigidState& s) const {
  return 0.5 * s.omega_body_radps.dot(inertia_ * s.omega_body_radps);
}

Eigen::Vector3d RigidBodyIntegrator::AngularMomentumWorld(const RigidState& s) const {
  return s.world_from_body * (inertia_ * s.omega_body_radps);
}

}  // namespace tumbletrace
