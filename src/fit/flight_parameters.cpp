#include <Eigen/Geometry>

#include "tumbletrace/fit/aero.hpp"
#include "tumbletrace/fit/flight_model.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/torque_free.hpp"

namespace tumbletrace {

const char* RotationModelName(RotationModel model) {
  switch (model) {
    case RotationModel::kConstantSpin: return "constant-spin";
    case RotationModel::kSymmetricTop: return "symmetric";
    case RotationModel::kFreeTop: return "free";
  }
  return "unknown";
}

const char* TranslationModelName(TranslationModel model) {
  switch (model) {
    case TranslationModel::kVacuum: return "none";
    case TranslationModel::kDrag: return "quadratic";
    case TranslationModel::kDragLift: return "quadratic+lift";
  }
  return "unknown";
}

namespace {

Eigen::Quaterniond ToQuaternion(const Eigen::Vector4d& wxyz) {
  return Eigen::Quaterniond(wxyz[0], wxyz[1], wxyz[2], wxyz[3]).normalized();
}

}  // namespace

Eigen::Matrix3d FlightParameters::BodyFromPrincipal() const {
  return ToQuaternion(body_from_principal_wxyz).toRotationMatrix();
}

void FlightParameters::TranslationAt(const std::vector<double>& t_s,
                                     std::vector<Eigen::Vector3d>* positions_m,
                                     std::vector<Eigen::Vector3d>* velocities_mps) const {
  const size_t n = t_s.size();
  if (positions_m) positions_m->resize(n);
  if (velocities_mps) velocities_mps->resize(n);
  if (translation_model == TranslationModel::kVacuum) {
    for (size_t i = 0; i < n; ++i) {
      if (positions_m) {
        BallisticTranslation::Position(r0_world_m.data(), v0_world_mps.data(),
                                       g_world_mps2.data(), t_s[i] - t0_s, (*positions_m)[i].data());
      }
      if (velocities_mps) {
        BallisticTranslation::Velocity(v0_world_mps.data(), g_world_mps2.data(), t_s[i] - t0_s,
                                       (*velocities_mps)[i].data());
      }
    }
    return;
  }
  AeroInputs<double> in;
  for (int i = 0; i < 3; ++i) {
    in.v0[i] = v0_world_mps[i];
    in.g[i] = g_world_mps2[i];
    in.w[i] = omega_world_radps[i];
    in.wind[i] = wind_world_mps[i];
  }
  in.k = aero[0];
  in.k_lift = translation_model == TranslationModel::kDragLift ? aero[1] : 0.0;
  std::vector<double> taus(n);
  for (size_t i = 0; i < n; ++i) taus[i] = t_s[i] - t0_s;
  const std::vector<AeroState<double>> states = PropagateAero(in, taus);
  for (size_t i = 0; i < n; ++i) {
    if (positions_m) (*positions_m)[i] = r0_world_m + Eigen::Vector3d(states[i].dr);
    if (velocities_mps) (*velocities_mps)[i] = Eigen::Vector3d(states[i].v);
  }
}

Eigen::Vector3d FlightParameters::PositionAt(double t_s) const {
  std::vector<Eigen::Vector3d> r;
  TranslationAt({t_s}, &r, nullptr);
  return r[0];
}

Eigen::Vector3d FlightParameters::VelocityAt(double t_s) const {
  std::vector<Eigen::Vector3d> v;
  TranslationAt({t_s}, nullptr, &v);
  return v[0];
}

void FlightParameters::RotationAt(const std::vector<double>& t_s,
                                  std::vector<Eigen::Matrix3d>* world_from_body,
                                  std::vector<Eigen::Vector3d>* omegas_world_radps) const {
  const size_t n = t_s.size();
  if (world_from_body) world_from_body->resize(n);
  if (omegas_world_radps) omegas_world_radps->resize(n);
  const Eigen::Quaterniond q0 = ToQuaternion(q0_wxyz);
  if (rotation_model == RotationModel::kConstantSpin) {
    for (size_t i = 0; i < n; ++i) {
      double q[4];
      ConstantSpinRotation::Orientation(q0_wxyz.data(), omega_world_radps.data(),
                                        t_s[i] - t0_s, q);
      if (world_from_body) (*world_from_body)[i] = ToQuaternion(Eigen::Vector4d(q)).toRotationMatrix();
      if (omegas_world_radps) (*omegas_world_radps)[i] = omega_world_radps;
    }
    return;
  }
  const Eigen::Quaterniond p = ToQuaternion(body_from_principal_wxyz);
  const Eigen::Quaterniond world_from_principal0 = q0 * p;
  const Eigen::Vector3d w0 = world_from_principal0.conjugate() * omega_world_radps;
  const Eigen::Vector3d moments = Moments();
  TorqueFreeState<double> x0;
  x0.u[0] = 1.0;
  x0.u[1] = x0.u[2] = x0.u[3] = 0.0;
  for (int k = 0; k < 3; ++k) x0.w[k] = w0[k];
  std::vector<double> taus(n);
  for (size_t i = 0; i < n; ++i) taus[i] = t_s[i] - t0_s;
  const std::vector<TorqueFreeState<double>> states = PropagateTorqueFree(
      moments.data(), x0, taus, TorqueFreeMaxRate(w0.data(), moments.data()),
      max_step_angle_rad);
  for (size_t i = 0; i < n; ++i) {
    const Eigen::Quaterniond u(states[i].u[0], states[i].u[1], states[i].u[2], states[i].u[3]);
    const Eigen::Quaterniond world_from_principal = world_from_principal0 * u;
    if (world_from_body) {
      (*world_from_body)[i] = (world_from_principal * p.conjugate()).normalized().toRotationMatrix();
    }
    if (omegas_world_radps) {
      (*omegas_world_radps)[i] =
          world_from_principal * Eigen::Vector3d(states[i].w[0], states[i].w[1], states[i].w[2]);
    }
  }
}

Eigen::Matrix3d FlightParameters::WorldFromBodyAt(double t_s) const {
  std::vector<Eigen::Matrix3d> r;
  RotationAt({t_s}, &r, nullptr);
  return r[0];
}

Eigen::Vector3d FlightParameters::OmegaWorldAt(double t_s) const {
  std::vector<Eigen::Vector3d> w;
  RotationAt({t_s}, nullptr, &w);
  return w[0];
}

bool FlightParameters::PredictPixel(const Camera& camera, const Eigen::Vector3d& marker_body_m,
                                    double t_s, Eigen::Vector2d* pixel) const {
  const Eigen::Vector3d x_world =
      PositionAt(t_s) + WorldFromBodyAt(t_s) * (marker_body_m - cm_body_m);
  return ProjectWorldPoint(camera, x_world, pixel);
}

}  // namespace tumbletrace
