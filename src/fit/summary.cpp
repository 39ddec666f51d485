#include "tumbletrace/fit/summary.hpp"

#include <ceres/manifold.h>

#include <Eigen/Dense>
#include <cmath>
#include <algorithm>
#include <array>
#include <functional>

#include "tumbletrace/model/mass_properties.hpp"

namespace tumbletrace {
namespace {

using Function = std::function<Eigen::VectorXd(const FlightParameters&)>;

// First-order propagation: Sigma_f = J Sigma J^T, J by central differences in the
// tangent space (step 1e-7 in m, m/s, m/s^2, rad and rad/s alike).
Eigen::MatrixXd Propagate(const FlightParameters& p, const Eigen::MatrixXd& covariance,
                          const Function& f) {
  const Eigen::VectorXd f0 = f(p);
  const int n = static_cast<int>(covariance.rows());
  Eigen::MatrixXd j = Eigen::MatrixXd::Zero(f0.size(), n);
  constexpr double h = 1e-7;
  for (int k = 0; k < n; ++k) {
    if (covariance(k, k) == 0.0) continue;  // a block this model does not have
    Eigen::VectorXd d = Eigen::VectorXd::Zero(n);
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

FlightParameters Perturb(const FlightParameters& p, const Eigen::VectorXd& d) {
  FlightParameters out = p;
  out.r0_world_m += d.segment<3>(kR0);
  out.v0_world_mps += d.segment<3>(kV0);
  out.g_world_mps2 += d.segment<3>(kG);
  ceres::QuaternionManifold manifold;
  const Eigen::Vector3d dq0 = d.segment<3>(kQ0);
  manifold.Plus(p.q0_wxyz.data(), dq0.data(), out.q0_wxyz.data());
  out.omega_world_radps += d.segment<3>(kOmega);
  out.cm_body_m += d.segment<3>(kCm);
  const Eigen::Vector3d dp = d.segment<3>(kPrincipal);
  manifold.Plus(p.body_from_principal_wxyz.data(), dp.data(), out.body_from_principal_wxyz.data());
  out.moments_sd += d.segment<2>(kMoments);
  out.aero += d.segment<2>(kAero);
  for (size_t k = 0; k < out.time_offsets_s.size() && kTimeOffsets + k < size_t(d.size()); ++k) {
    out.time_offsets_s[k] += d[kTimeOffsets + k];
  }
  return out;
}

namespace {

// Principal moments ascending with their axes (columns), from the fitted frame and [s, d].
PrincipalAxes SortedPrincipal(const FlightParameters& p) {
  const Eigen::Matrix3d axes = p.BodyFromPrincipal();
  Eigen::Vector3d moments = p.Moments();
  std::array<int, 3> order = {0, 1, 2};
  std::sort(order.begin(), order.end(), [&](int a, int b) { return moments[a] < moments[b]; });
  PrincipalAxes out;
  for (int k = 0; k < 3; ++k) {
    out.moments_kgm2[k] = moments[order[k]];
    Eigen::Vector3d a = axes.col(order[k]);
    Eigen::Index i_max;
    a.cwiseAbs().maxCoeff(&i_max);
    out.axes_body.col(k) = a[i_max] < 0 ? Eigen::Vector3d(-a) : a;
  }
  return out;
}

Eigen::Vector3d AngularMomentumDirection(const FlightParameters& p) {
  if (p.rotation_model == RotationModel::kConstantSpin) return p.omega_world_radps.normalized();
  const Eigen::Matrix3d r0 = p.WorldFromBodyAt(p.t0_s);
  const Eigen::Matrix3d axes = p.BodyFromPrincipal();
  const Eigen::Vector3d w_principal = axes.transpose() * r0.transpose() * p.omega_world_radps;
  return (r0 * axes * p.Moments().cwiseProduct(w_principal)).normalized();
}

// Zero crossings of the intermediate axis's component along the angular momentum, when it
// comes within 45 degrees of it (a tumble about the intermediate axis, not a wobble about
// the largest or the smallest).
std::vector<double> FlipTimes(const FlightParameters& p, const std::vector<double>& times) {
  std::vector<double> flips;
  if (p.rotation_model != RotationModel::kFreeTop || times.size() < 2) return flips;
  const PrincipalAxes principal = SortedPrincipal(p);
  const Eigen::Vector3d intermediate = principal.axes_body.col(1);
  const Eigen::Vector3d l = AngularMomentumDirection(p);
  std::vector<Eigen::Matrix3d> rotations;
  p.RotationAt(times, &rotations, nullptr);
  std::vector<double> c(times.size());
  double largest = 0.0;
  for (size_t i = 0; i < times.size(); ++i) {
    c[i] = (rotations[i] * intermediate).dot(l);
    largest = std::max(largest, std::abs(c[i]));
  }
  if (largest < std::cos(M_PI / 4)) return flips;
  for (size_t i = 1; i < c.size(); ++i) {
    if ((c[i - 1] < 0) != (c[i] < 0)) {
      flips.push_back(times[i - 1] + (times[i] - times[i - 1]) * c[i - 1] / (c[i - 1] - c[i]));
    }
  }
  return flips;
}

}  // namespace

namespace {

DragSummary SummariseDrag(const FitResult& fit, const Body& body, const AirSpec& air,
                          double launch_time_s) {
  const FlightParameters& p = fit.parameters;
  DragSummary d;
  d.model = p.translation_model;
  d.reason = fit.translation_reason;
  d.air_density_kgpm3 = air.Density();
  d.air_viscosity_pas = air.Viscosity();
  d.air = air.Describe();
  d.wind_world_mps = p.wind_world_mps;
  if (d.model == TranslationModel::kVacuum) return d;
  const Eigen::Matrix2d cov = fit.covariance.block<2, 2>(kAero, kAero);
  d.k_per_m = p.aero[0];
  d.sigma_k_per_m = std::sqrt(std::max(cov(0, 0), 0.0));
  if (d.model == TranslationModel::kDragLift) {
    d.k_lift = p.aero[1];
    d.sigma_k_lift = std::sqrt(std::max(cov(1, 1), 0.0));
  }
  const Eigen::Vector3d v_r = p.VelocityAt(launch_time_s) - p.wind_world_mps;
  const double rho = d.air_density_kgpm3;
  std::optional<double> mass_kg = body.mass_kg;
  if (!mass_kg && !body.parts.empty()) mass_kg = CombineParts(body.parts).mass_kg;
  if (mass_kg && body.reference_area_m2) {
    // k = rho C_d A / (2 m)  =>  C_d = 2 m k / (rho A); the mass, area and density are
    // taken as exact: the 1-sigma is that of k alone.
    const double scale = 2.0 * *mass_kg / (rho * *body.reference_area_m2);
    d.cd = scale * *d.k_per_m;
    d.sigma_cd = scale * *d.sigma_k_per_m;
    if (d.k_lift) {
      // |a_L| = k_L |w x v_r| = C_L rho A |v_r|^2 / (2 m).
      const double ratio = p.omega_world_radps.cross(v_r).norm() / v_r.squaredNorm();
      d.cl_at_launch = scale * *d.k_lift * ratio;
      d.sigma_cl_at_launch = scale * *d.sigma_k_lift * ratio;
    }
  } else {
    d.notes.push_back(
        "C_d is not reported: it needs the body's mass (mass_kg or a parts list) and its "
        "reference area (aero_reference: {area: ..}) in the body file.");
  }
  if (body.reference_length_m) {
    // Re = rho |v_r| L / mu (common practice), at launch.
    d.reynolds_at_launch = rho * v_r.norm() * *body.reference_length_m / d.air_viscosity_pas;
    d.spin_ratio_at_launch =
        p.omega_world_radps.norm() * *body.reference_length_m / (2.0 * v_r.norm());
  } else {
    d.notes.push_back(
        "The Reynolds number is not reported: it needs the body's reference length "
        "(aero_reference: {length: ..}) in the body file.");
  }
  return d;
}

}  // namespace

FlightSummary Summarise(const FitResult& fit, const Body& body, const AirSpec& air) {
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
  if (cov_g.trace() > 0) {
    s.sigma_gravity_mps2 = cov_g.diagonal().cwiseSqrt();
    // The direction u = g / |g| moves by (1 - u u^T) dg / |g|: its angle's variance is the
    // trace of that projection of cov_g over |g|^2 (first order).
    const Eigen::Vector3d u = p.g_world_mps2.normalized();
    const Eigen::Matrix3d across = Eigen::Matrix3d::Identity() - u * u.transpose();
    s.sigma_gravity_direction_deg =
        std::sqrt(std::max((across * cov_g * across).trace(), 0.0)) / p.g_world_mps2.norm() *
        180.0 / M_PI;
  }

  // Rotation: model, inertia, angular momentum, flips.
  s.rotation_model = p.rotation_model;
  s.rotation_reason = fit.model_reason;
  s.angular_momentum_world_unit = AngularMomentumDirection(p);
  {
    const Eigen::MatrixXd cov_l = Propagate(p, cov, [](const FlightParameters& q) {
      return Eigen::VectorXd(AngularMomentumDirection(q));
    });
    s.sigma_angular_momentum_deg = std::sqrt(std::max(cov_l.trace(), 0.0)) * 180.0 / M_PI;
  }
  if (p.rotation_model != RotationModel::kConstantSpin &&
      (fit.inertia_held || fit.inertia_determined)) {
    const PrincipalAxes principal = SortedPrincipal(p);
    const Eigen::Vector3d& m = principal.moments_kgm2;
    s.inertia_ratios = Eigen::Vector2d(m[0] / m[2], m[1] / m[2]);
    s.inertia_held = fit.inertia_held;
    if (!s.inertia_held) {
      const Eigen::MatrixXd cov_ratios = Propagate(p, cov, [](const FlightParameters& q) {
        const Eigen::Vector3d mq = SortedPrincipal(q).moments_kgm2;
        return Eigen::VectorXd(Eigen::Vector2d(mq[0] / mq[2], mq[1] / mq[2]));
      });
      s.inertia_sigma_ratios = cov_ratios.diagonal().cwiseMax(0).cwiseSqrt();
    }
    // The rotation vector of the principal frame (body frame) is twice Ceres' quaternion
    // tangent; an axis a tilts by |theta x a|.
    const Eigen::Matrix3d cov_theta = 4.0 * cov.block<3, 3>(kPrincipal, kPrincipal);
    for (int k = 0; k < 3; ++k) {
      const Eigen::Vector3d a = principal.axes_body.col(k);
      // A symmetric top determines its symmetry axis only (the unequal moment's).
      const int symmetry_axis = std::abs(m[1] - m[0]) < std::abs(m[2] - m[1]) ? 2 : 0;
      if (p.rotation_model == RotationModel::kSymmetricTop && k != symmetry_axis) continue;
      s.inertia_axes_body[k] = a;
      if (!s.inertia_held) {
        const Eigen::Matrix3d perpendicular = Eigen::Matrix3d::Identity() - a * a.transpose();
        s.inertia_sigma_axes_deg[k] =
            std::sqrt(std::max((perpendicular * cov_theta * perpendicular).trace(), 0.0)) * 180.0 / M_PI;
      }
    }
    std::vector<double> times;
    for (const ResidualRecord& r : fit.residuals) times.push_back(r.time_s);
    std::sort(times.begin(), times.end());
    times.erase(std::unique(times.begin(), times.end()), times.end());
    s.flip_times_s = FlipTimes(p, times);
  }

  // Energy at launch.
  // The rotational part needs the inertia per unit mass, which only the parts list gives
  // (the flight fixes its ratios, not its scale); the joules need a mass: the weighed one
  // (`mass_kg` in the body file) or else the parts list's.
  s.translational_energy_per_mass_jpkg = 0.5 * s.launch_velocity_mps.squaredNorm();
  std::optional<double> mass_kg = body.mass_kg;
  if (!body.parts.empty()) {
    const MassProperties design = CombineParts(body.parts);
    s.rotational_energy_per_mass_jpkg =
        0.5 * s.omega_body_radps.dot(design.inertia_about_cm_kgm2 * s.omega_body_radps) /
        design.mass_kg;
    if (!mass_kg) mass_kg = design.mass_kg;
  }
  if (mass_kg) {
    s.translational_energy_j = *mass_kg * s.translational_energy_per_mass_jpkg;
    if (s.rotational_energy_per_mass_jpkg) {
      s.rotational_energy_j = *mass_kg * *s.rotational_energy_per_mass_jpkg;
    }
  }

  s.time_offsets_s = fit.time_offsets_s;
  s.sigma_time_offsets_s = fit.sigma_time_offsets_s;
  s.rms_px_per_camera = fit.rms_px_per_camera;
  s.drag = SummariseDrag(fit, body, air, tl);
  return s;
}

}  // namespace tumbletrace
