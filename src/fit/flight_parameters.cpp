#include <Eigen/Geometry>

#include "tumbletrace/fit/flight_model.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"

namespace tumbletrace {

Eigen::Vector3d FlightParameters::PositionAt(double t_s) const {
  Eigen::Vector3d r;
  BallisticTranslation::Position(r0_world_m.data(), v0_world_mps.data(), g_world_mps2.data(),
                                 t_s - t0_s, r.data());
  return r;
}

Eigen::Vector3d FlightParameters::VelocityAt(double t_s) const {
  Eigen::Vector3d v;
  BallisticTranslation::Velocity(v0_world_mps.data(), g_world_mps2.data(), t_s - t0_s,
                                 v.data());
  return v;
}

Eigen::Matrix3d FlightParameters::WorldFromBodyAt(double t_s) const {
  double q[4];
  ConstantSpinRotation::Orientation(q0_wxyz.data(), omega_world_radps.data(), t_s - t0_s, q);
  return Eigen::Quaterniond(q[0], q[1], q[2], q[3]).normalized().toRotationMatrix();
}

Eigen::Vector3d FlightParameters::OmegaWorldAt(double t_s) const {
  Eigen::Vector3d w;
  ConstantSpinRotation::AngularVelocityWorld(omega_world_radps.data(), t_s - t0_s, w.data());
  return w;
}

bool FlightParameters::PredictPixel(const Camera& camera, const Eigen::Vector3d& marker_body_m,
                                    double t_s, Eigen::Vector2d* pixel) const {
  const Eigen::Vector3d x_world =
      PositionAt(t_s) + WorldFromBodyAt(t_s) * (marker_body_m - cm_body_m);
  return ProjectWorldPoint(camera, x_world, pixel);
}

}  // namespace tumbletrace
