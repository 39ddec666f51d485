// The quantities a user reads, derived from a fit with their uncertainty: the CM in the
// body frame and from the named reference points, the launch state at the first frame of
// the window, the spin. Uncertainty is propagated from the tangent-space covariance by
// first-order (delta-method) propagation, Sigma_f = J Sigma J^T with J by central
// differences. Values the data cannot determine are empty optionals, never numbers.
#pragma once

#include <Eigen/Core>
#include <array>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/model/air.hpp"
#include "tumbletrace/model/body.hpp"

namespace tumbletrace {

using MaybeVector3 = std::array<std::optional<double>, 3>;

// An axis counts as undetermined when an unobservable direction has a component above
// this along it (about 1.1 degrees). Below it the axis's value is that of the point of the
// CM line nearest the body origin, which stays within this fraction of the unknown offset
// along the line: the fitted spin axis never lies exactly along a body axis, only within
// the noise of the fit.
constexpr double kUndeterminedAxisComponent = 0.02;
bool AxisUndetermined(const Eigen::Vector3d& axis, const std::vector<Eigen::Vector3d>& directions);

// Two-sided 95 % interval half-width in standard deviations (normal, large dof).
constexpr double kZ95 = 1.959963984540054;

struct ReferenceDistance {
  MaybeVector3 vector_m;                  // CM - reference point, body frame
  std::optional<double> distance_m;
  std::optional<double> sigma_distance_m;
};

// Flight through air: the chosen translation model and, when it has them, the drag
// constant k = rho C_d A / (2 m) and the Magnus coefficient k_L (fit/aero.hpp), with the
// coefficients that need the mass and the reference area (C_d; C_L at launch) and the
// Reynolds number at launch, which needs the reference length. The air density and
// viscosity are the session's (or the standard atmosphere's, said so in `air`).
struct DragSummary {
  TranslationModel model = TranslationModel::kVacuum;
  std::string reason;
  std::optional<double> k_per_m, sigma_k_per_m;
  std::optional<double> k_lift, sigma_k_lift;
  std::optional<double> cd, sigma_cd;
  std::optional<double> cl_at_launch, sigma_cl_at_launch;
  std::optional<double> reynolds_at_launch;
  std::optional<double> spin_ratio_at_launch;   // |w| L / (2 |v_r|)
  double air_density_kgpm3 = 0.0;
  double air_viscosity_pas = 0.0;
  std::string air;                              // where the density comes from
  Eigen::Vector3d wind_world_mps = Eigen::Vector3d::Zero();
  std::vector<std::string> notes;               // why a coefficient is null
};

struct FlightSummary {
  // CM in the body frame.
  MaybeVector3 cm_body_m;
  MaybeVector3 cm_sigma_m;
  std::array<std::array<std::optional<double>, 3>, 3> cm_covariance_m2;
  std::vector<Eigen::Vector3d> cm_unobservable_body;
  // The CM lies on cm_line_point_body_m + s u (u the unobservable directions): the point
  // of that set nearest the body origin. Equal to the CM when all is observable.
  Eigen::Vector3d cm_line_point_body_m = Eigen::Vector3d::Zero();
  std::map<std::string, ReferenceDistance> cm_from_references;
  std::optional<Eigen::Vector3d> design_cm_body_m;  // from the parts list, when given
  std::optional<double> design_mass_kg;

  // Launch: the CM state at the first frame of the window.
  int launch_frame = 0;
  double launch_time_s = 0.0;
  MaybeVector3 launch_position_m;  // null along world directions the data leave open
  Eigen::Vector3d launch_velocity_mps = Eigen::Vector3d::Zero();
  Eigen::Vector3d launch_sigma_velocity_mps = Eigen::Vector3d::Zero();
  double launch_speed_mps = 0.0;
  double launch_sigma_speed_mps = 0.0;
  double launch_angle_deg = 0.0;  // above the horizontal (the plane normal to gravity)
  double launch_sigma_angle_deg = 0.0;

  // Spin at the launch time.
  Eigen::Vector3d omega_world_radps = Eigen::Vector3d::Zero();
  Eigen::Vector3d omega_body_radps = Eigen::Vector3d::Zero();
  Eigen::Vector3d sigma_omega_world_radps = Eigen::Vector3d::Zero();
  double rate_rev_per_s = 0.0;
  double sigma_rate_rev_per_s = 0.0;

  Eigen::Vector3d gravity_world_mps2 = Eigen::Vector3d::Zero();
  std::optional<Eigen::Vector3d> sigma_gravity_mps2;  // when estimated
  // When g (or its direction) was estimated: the 1-sigma of its direction as an angle, deg
  // (the rms angle: sqrt of the trace of its covariance across g).
  std::optional<double> sigma_gravity_direction_deg;

  // Rotation model and what the rotation tells of the body.
  RotationModel rotation_model = RotationModel::kConstantSpin;
  std::string rotation_reason;
  // Principal moments as [I1/I3, I2/I3] with I1 <= I2 <= I3, when a torque-free model
  // estimated them (or held them from the parts list: inertia_held).
  std::optional<Eigen::Vector2d> inertia_ratios;
  std::optional<Eigen::Vector2d> inertia_sigma_ratios;
  bool inertia_held = false;
  // Column k: principal axis k in the body frame (sign: largest component positive);
  // empty where the model leaves it open (the two equal axes of a symmetric top).
  std::array<std::optional<Eigen::Vector3d>, 3> inertia_axes_body;
  std::array<std::optional<double>, 3> inertia_sigma_axes_deg;  // 1-sigma tilt of each axis
  // Direction of the angular momentum in the world (constant in free flight).
  Eigen::Vector3d angular_momentum_world_unit = Eigen::Vector3d::Zero();
  double sigma_angular_momentum_deg = 0.0;
  // Times (s) within the window where the intermediate axis passes through 90 degrees to
  // the angular momentum in a tumble dominated by it (a flip); empty when none.
  std::vector<double> flip_times_s;
  // Energy at launch: translational and rotational per unit mass (J/kg), absolute (J)
  // when the parts list gives the mass. The rotational part needs the inertia's scale,
  // which the flight does not give: from the parts list only.
  double translational_energy_per_mass_jpkg = 0.0;
  std::optional<double> rotational_energy_per_mass_jpkg;
  std::optional<double> translational_energy_j;
  std::optional<double> rotational_energy_j;

  // Per camera (several cameras): clock offset and its 1-sigma (0 when held), rms, px.
  std::vector<double> time_offsets_s;
  std::vector<double> sigma_time_offsets_s;
  std::vector<double> rms_px_per_camera;

  DragSummary drag;
};

// Derives the summary of a fit; `air` gives the density and viscosity for C_d and Re.
FlightSummary Summarise(const FitResult& fit, const Body& body, const AirSpec& air = AirSpec());

// Tangent-space perturbation of the parameters, in CovarianceBlock order (q0 and the
// principal frame by Ceres' QuaternionManifold: q <- [cos|d|, sin|d| d/|d|] (x) q).
FlightParameters Perturb(const FlightParameters& p, const Eigen::VectorXd& d);

}  // namespace tumbletrace
