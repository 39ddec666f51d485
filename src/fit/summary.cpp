#include "tumbletrace/fit/summary.hpp"

#include <ceres/manifold.h>

#include <Eigen/Dense>
#include <cmath>
#include <functional>

#include "tumbletrace/model/mass_properties.hpp"

namespace tumbletrace {
namespace {

using Tangent = Eigen::Matrix<double, kTangentSize, 1>;
using Function = std::function<Eigen::VectorXd(const FlightParameters&)>;

// First-order propagation: Sigma_f = J Sigma J^T, J by central differences in the
// tangent space (step 1e-7 in m, m/s, m/s^2, rad and rad/s alike).
Eigen::MatrixXd Propagate(const FlightParameters& p, const Eigen::MatrixXd& covariance,
                          const Function& f) {
  const Eigen::VectorXd f0 = f(p);
  Eigen::MatrixXd j(f0.size(), kTangentSize);
  constexpr double h = 1e-7;
  for (int k = 0; k < kTangentSize; ++k) {
    Tangent d = Tangent::Zero();
    d[k] = h;
    j.col(k) = (f(Perturb(p, d)) - f(Perturb(p, -d))) / (2 * h);
  }
  return j * covariance * j.transpose();
}

}  // namespace

bool AxisUndetermined(const Eigen::Vector3d& axis, const std::vector<Eigen::Vector3d>& directions) {
  for (const auto& u : directions) {
    if (std::abs(axis.dot(u)) > kUndeterminedAxisComponent) return true;
  }
  return false;
}

FlightParameters Perturb(const FlightParameters& p, const Tangent& d) {
  FlightParameters out = p;
  out.r0_world_m += d.segment<3>(kR0);
  out.v0_world_mps += d.segment<3>(kV0);
  out.g_world_mps2 += d.segment<3>(kG);
  ceres::QuaternionManifold manifold;
  manifold.Plus(p.q0_wxyz.data(), d.segment<3>(kQ0).data(), out.q0_wxyz.data());
  out.omega_world_radps += d.segment<3>(kOmega);
  out.cm_body_m += d.segment<3>(kCm);
  return out;
}

FlightSummary Summarise(const FitResult& fit, const Body& body) {
  FlightSummary s;
  const FlightParameters& p = fit.parameters;
  const std::vector<Eigen::Vector3d>& null_body = fit.cm.unobservable_body;

  // The fit returns the representative of an undetermined CM nearest the body origin.
  s.cm_line_point_body_m = p.cm_body_m;
  s.cm_unobservable_body = null_body;

  const Eigen::Matrix3d& cov_c = fit.cm.covariance_m2;
  for (int i = 0; i < 3; ++i) {
    const bool open_i = AxisUndetermined(Eigen::Vector3d::Unit(i), null_body);
    if (!open_i) {
      s.cm_body_m[i] = p.cm_body_m[i];
      s.cm_sigma_m[i] = std::sqrt(std::max(cov_c(i, i), 0.0));
    }
    for (int j = 0; j < 3; ++j) {
      if (!open_i && !AxisUndetermined(Eigen::Vector3d::Unit(j), null_body)) {
        s.cm_covariance_m2[i][j] = cov_c(i, j);
      }
    }
  }
  for (const auto& [name, at_m] : body.references_body_m) {
    ReferenceDistance r;
    for (int i = 0; i < 3; ++i) {
      if (s.cm_body_m[i]) r.vector_m[i] = *s.cm_body_m[i] - at_m[i];
    }
    if (null_body.empty()) {
      const Eigen::Vector3d d = p.cm_body_m - at_m;
      r.distance_m = d.norm();
      if (d.norm() > 0) {
        const Eigen::Vector3d n = d.normalized();
        r.sigma_distance_m = std::sqrt(std::max(n.dot(cov_c * n), 0.0));
      }
    }
    s.cm_from_references[name] = r;
  }
  if (!body.parts.empty()) {
    const MassProperties design = CombineParts(body.parts);
    s.design_cm_body_m = design.cm_body_m;
    s.design_mass_kg = design.mass_kg;
  }

  // Launch state at the first frame of the window.
  s.launch_frame = fit.first_frame;
  s.launch_time_s = fit.first_time_s;
  const double tl = s.launch_time_s;
  const Eigen::MatrixXd& cov = fit.covariance;
  const Eigen::Vector3d position = p.PositionAt(tl);
  const Eigen::Matrix3d world_from_body = p.WorldFromBodyAt(tl);
  for (int i = 0; i < 3; ++i) {
    std::vector<Eigen::Vector3d> null_world;
    for (const auto& u : null_body) null_world.push_back(world_from_body * u);
    if (!AxisUndetermined(Eigen::Vector3d::Unit(i), null_world)) s.launch_position_m[i] = position[i];
  }
  s.launch_velocity_mps = p.VelocityAt(tl);
  const Eigen::MatrixXd cov_v = Propagate(p, cov, [tl](const FlightParameters& q) {
    return Eigen::VectorXd(q.VelocityAt(tl));
  });
  s.launch_sigma_velocity_mps = cov_v.diagonal().cwiseMax(0).cwiseSqrt();
  // Speed and the angle above the plane normal to gravity.
  const Eigen::MatrixXd cov_sa = Propagate(p, cov, [tl](const FlightParameters& q) {
    const Eigen::Vector3d v = q.VelocityAt(tl);
    const Eigen::Vector3d up = -q.g_world_mps2.normalized();
    Eigen::VectorXd out(2);
    out << v.norm(), std::asin(std::clamp(v.dot(up) / v.norm(), -1.0, 1.0)) * 180.0 / M_PI;
    return out;
  });
  s.launch_speed_mps = s.launch_velocity_mps.norm();
  s.launch_angle_deg =
      std::asin(std::clamp(s.launch_velocity_mps.dot(-p.g_world_mps2.normalized()) /
                               s.launch_speed_mps, -1.0, 1.0)) * 180.0 / M_PI;
  s.launch_sigma_speed_mps = std::sqrt(std::max(cov_sa(0, 0), 0.0));
  s.launch_sigma_angle_deg = std::sqrt(std::max(cov_sa(1, 1), 0.0));

  // Spin at the launch time.
  s.omega_world_radps = p.OmegaWorldAt(tl);
  s.omega_body_radps = world_from_body.transpose() * s.omega_world_radps;
  const Eigen::MatrixXd cov_w = Propagate(p, cov, [tl](const FlightParameters& q) {
    const Eigen::Vector3d w = q.OmegaWorldAt(tl);
    Eigen::VectorXd out(4);
    out << w, w.norm() / (2 * M_PI);
    return out;
  });
  s.sigma_omega_world_radps = cov_w.diagonal().head<3>().cwiseMax(0).cwiseSqrt();
  s.rate_rev_per_s = s.omega_world_radps.norm() / (2 * M_PI);
  s.sigma_rate_rev_per_s = std::sqrt(std::max(cov_w(3, 3), 0.0));

  s.gravity_world_mps2 = p.g_world_mps2;
  const Eigen::Matrix3d cov_g = cov.block<3, 3>(kG, kG);
  if (cov_g.trace() > 0) s.sigma_gravity_mps2 = cov_g.diagonal().cwiseSqrt();
  return s;
}

}  // namespace tumbletrace
