// The joint least-squares fit of the free-flight model to every marker sighting.
//
// Unknowns: r0, v0 (CM at t0, world), q0 (orientation at t0 on Ceres' quaternion
// manifold), w (angular velocity, world), c (CM in the body frame) and, when asked, g.
// Residuals are in pixels. The fit runs in two passes: a robust pass (Huber loss of scale
// `robust_loss_scale_px`) from the closed-form initialisation, then sightings whose
// residual exceeds `outlier_threshold` robust standard deviations of its own marker are set
// aside as outliers and the problem is solved again by plain least squares on the rest.
// The covariance is the sandwich of that estimator under a noise model of per-series
// variances and AR(1) correlation in time (fit/noise_model.hpp).
#pragma once

#include <Eigen/Core>
#include <Eigen/Geometry>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/fit/noise_model.hpp"
#include "tumbletrace/fit/observations.hpp"
#include "tumbletrace/fit/robust_scale.hpp"
#include "tumbletrace/fit/torque_free.hpp"
#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

// How the body turns (fit/flight_model.hpp, fit/torque_free_rotation.hpp).
enum class RotationModel {
  kConstantSpin,   // constant angular velocity: a spin about a principal axis
  kSymmetricTop,   // torque-free, two equal principal moments: the symmetry axis precesses
  kFreeTop,        // torque-free, three unequal moments: wobble, tumble, flips
};
// The name results.json uses ("constant-spin", "symmetric", "free").
const char* RotationModelName(RotationModel model);

// How the CM moves: in vacuum (a parabola), or through air with quadratic drag, or with
// drag and a spin-dependent (Magnus) lift (fit/aero.hpp).
enum class TranslationModel { kVacuum, kDrag, kDragLift };
// The name results.json uses ("none", "quadratic", "quadratic+lift").
const char* TranslationModelName(TranslationModel model);

// Which translation models the fit tries: one, or all that apply with the choice by BIC.
enum class DragChoice { kAuto, kNone, kQuadratic, kQuadraticLift };

// Which rotation models the fit tries: one, or all three with the choice by the Bayesian
// information criterion (the simplest model wins unless a richer one lowers the BIC).
enum class RotationChoice { kAuto, kConstantSpin, kSymmetricTop, kFreeTop };

// Principal axes and moments held fixed (from the parts list), body frame.
struct HeldInertia {
  Eigen::Matrix3d axes_body = Eigen::Matrix3d::Identity();  // column k: principal axis k
  Eigen::Vector3d moments = Eigen::Vector3d::Ones();        // any common scale
};

enum class GravityMode {
  kFixed,          // g from the session, held fixed
  kEstimate,       // all three components estimated (a check of scale and timing)
  kDirection,      // the direction estimated, the magnitude held at |gravity_world_mps2|
                   // (ceres::SphereManifold<3>): a camera without a pose, whose frame is
                   // then the world frame
};

struct FitOptions {
  GravityMode gravity_mode = GravityMode::kFixed;
  Eigen::Vector3d gravity_world_mps2 = {0, 0, -9.80665};  // the fixed value, or the start
  double robust_loss_scale_px = 1.0;   // Huber scale of the first pass, px
  double outlier_threshold_sigma = 4.29;  // chi-square(2 dof) 0.9999 quantile, sqrt
  // Each marker's own robust scale for the outlier test (fit/robust_scale.hpp).
  RobustScaleOptions outlier_scale;
  // The per-series AR(1) noise model of the covariance (fit/noise_model.hpp).
  NoiseModelOptions noise_model;
  int min_markers_per_frame = 4;       // for the per-frame poses of the initialisation
  int initial_pose_frames = 60;       // frames posed by PnP for the start, spread evenly
  int max_iterations = 200;
  // A CM direction is reported unobservable when its information is below this fraction
  // of the largest, or when its 1-sigma exceeds the size of the marker layout.
  double unobservable_relative_information = 1e-9;
  std::optional<int> first_frame;  // the window to fit (default: all frames given)
  std::optional<int> last_frame;
  // Several cameras: camera k's frame i is seen at world time i / fps_k + offset_k. The
  // offsets are held at these values (missing entries: 0) or, when asked, estimated for
  // every camera but the first, which sets the clock.
  std::vector<double> time_offsets_s;
  bool estimate_time_offsets = false;
  RotationChoice rotation = RotationChoice::kAuto;
  // In the automatic choice, a torque-free model whose principal axes the flight does not
  // determine cannot win (docs/method.md). Off for the window search's core fit: it sees
  // part of the flight, where a wobble's axes can be loosely held, and the richer model
  // grows the window; the final fit on the whole window applies it.
  bool torque_free_needs_axes = true;
  DragChoice drag = DragChoice::kAuto;
  Eigen::Vector3d wind_world_mps = Eigen::Vector3d::Zero();  // steady wind, given
  // Hold the principal axes and moment ratios (torque-free models) instead of estimating.
  std::optional<HeldInertia> held_inertia;
  // Step bound of the torque-free integrator: the largest turn of the body per RK4 step.
  double max_step_angle_rad = kTorqueFreeMaxStepAngleRad;

  // Empty when valid, otherwise the reason.
  std::string Validate() const;
};

// Parameter values at t0 (the fitted state).
struct FlightParameters {
  double t0_s = 0.0;
  Eigen::Vector3d r0_world_m = Eigen::Vector3d::Zero();
  Eigen::Vector3d v0_world_mps = Eigen::Vector3d::Zero();
  Eigen::Vector3d g_world_mps2 = Eigen::Vector3d::Zero();
  Eigen::Vector4d q0_wxyz = {1, 0, 0, 0};  // body to world
  Eigen::Vector3d omega_world_radps = Eigen::Vector3d::Zero();  // at t0
  Eigen::Vector3d cm_body_m = Eigen::Vector3d::Zero();
  RotationModel rotation_model = RotationModel::kConstantSpin;
  // Torque-free models: the principal frame in the body (body from principal) and the
  // moments (I1, I2, I3) = (s - d, s + d, 1) as [s, d].
  Eigen::Vector4d body_from_principal_wxyz = {1, 0, 0, 0};
  Eigen::Vector2d moments_sd = {1, 0};
  // Per camera: world time = frame time + offset (the first camera's is 0).
  std::vector<double> time_offsets_s;
  double max_step_angle_rad = kTorqueFreeMaxStepAngleRad;  // integrator step bound
  // Flight through air: k [1/m] and k_L (fit/aero.hpp), zero in vacuum; the wind as given.
  TranslationModel translation_model = TranslationModel::kVacuum;
  Eigen::Vector2d aero = Eigen::Vector2d::Zero();
  Eigen::Vector3d wind_world_mps = Eigen::Vector3d::Zero();

  // Camera k's clock offset (0 for a camera the list does not reach), s.
  double TimeOffsetS(int camera) const {
    return camera < static_cast<int>(time_offsets_s.size()) ? time_offsets_s[camera] : 0.0;
  }
  Eigen::Vector3d Moments() const { return {moments_sd[0] - moments_sd[1], moments_sd[0] + moments_sd[1], 1.0}; }
  Eigen::Matrix3d BodyFromPrincipal() const;
  Eigen::Vector3d PositionAt(double t_s) const;
  Eigen::Vector3d VelocityAt(double t_s) const;
  // The CM's position and velocity at many times (one integration for all in air).
  void TranslationAt(const std::vector<double>& t_s, std::vector<Eigen::Vector3d>* positions_m,
                     std::vector<Eigen::Vector3d>* velocities_mps) const;
  Eigen::Matrix3d WorldFromBodyAt(double t_s) const;
  Eigen::Vector3d OmegaWorldAt(double t_s) const;
  // Orientation and world angular velocity at many times (one integration for all).
  void RotationAt(const std::vector<double>& t_s, std::vector<Eigen::Matrix3d>* world_from_body,
                  std::vector<Eigen::Vector3d>* omegas_world_radps) const;
  // Model prediction of a marker's pixel; false when behind the camera.
  bool PredictPixel(const Camera& camera, const Eigen::Vector3d& marker_body_m, double t_s,
                    Eigen::Vector2d* pixel) const;
};

// Order of the tangent-space covariance: r0 (3), v0 (3), g (3), q0 (3), w (3), c (3),
// principal axes (3: a rotation vector in the body frame, exp(d) p), moments (2: s, d),
// the aerodynamic coefficients (2: k, k_L), then one clock offset per camera. Blocks a
// model does not have are zero.
enum CovarianceBlock {
  kR0 = 0, kV0 = 3, kG = 6, kQ0 = 9, kOmega = 12, kCm = 15, kPrincipal = 18, kMoments = 21,
  kAero = 23, kTimeOffsets = 25
};
inline int TangentSize(int cameras) { return kTimeOffsets + cameras; }

struct ResidualRecord {
  int camera = 0;
  int frame = 0;
  double time_s = 0.0;
  int marker_id = 0;
  Eigen::Vector2d observed_px;
  Eigen::Vector2d residual_px;  // predicted - observed
  bool outlier = false;
};

struct CmObservability {
  std::vector<Eigen::Vector3d> unobservable_body;  // unit vectors
  Eigen::Matrix3d covariance_m2 = Eigen::Matrix3d::Zero();  // of the observable part, m^2
  Eigen::Vector3d information_eigenvalues;  // of c's Schur complement, 1/m^2 (noise-scaled)
  Eigen::Matrix3d information_eigenvectors;  // columns, body frame
};

struct FitResult {
  FlightParameters parameters;
  bool converged = false;
  std::string termination;      // Ceres' message
  int iterations = 0;
  int observations = 0;         // sightings (each two residuals) in the window
  int outliers = 0;
  int frames_used = 0;
  int first_frame = 0;
  double first_time_s = 0.0;    // time of first_frame
  int last_frame = 0;
  double rms_px = 0.0;          // rms of the inliers' residual vectors' components, px
  double sigma_px = 0.0;        // estimated per-coordinate noise, px (dof-corrected)
  int degrees_of_freedom = 0;
  // Tangent-space covariance (order of CovarianceBlock): the sandwich A^+ (J^T Omega J) A^+
  // of the per-series AR(1) noise model `noise` (fit/noise_model.hpp). Entries involving
  // unobservable directions are meaningless and must not be reported.
  Eigen::MatrixXd covariance;
  // The same under independent errors of one variance, sigma_px^2 (J^T J)^+: kept for the
  // comparison (`WithWhiteNoiseCovariance`), never reported as the uncertainty.
  Eigen::MatrixXd white_noise_covariance;
  NoiseModel noise;
  // Variance of each body-frame CM component under `covariance` over that under
  // `white_noise_covariance` (1 where the white-noise variance is 0).
  Eigen::Vector3d variance_factor_cm = Eigen::Vector3d::Ones();
  // The rotation models tried, with the criterion that chose among them.
  struct ModelTrial {
    RotationModel model = RotationModel::kConstantSpin;
    int parameters = 0;        // estimated parameters (tangent dimensions)
    double sum_sq_px2 = 0.0;   // over the common inlier sightings
    double bic = 0.0;          // n ln(RSS/n) + k ln n, n residual components
    bool converged = false;
  };
  std::vector<ModelTrial> model_trials;  // empty when one model was asked for
  // The translation models tried (vacuum, drag, drag with lift), scored the same way on
  // the chosen rotation model's inliers; empty when one was asked for.
  struct TranslationTrial {
    TranslationModel model = TranslationModel::kVacuum;
    int parameters = 0;
    double sum_sq_px2 = 0.0;
    double bic = 0.0;
    bool converged = false;
  };
  std::vector<TranslationTrial> translation_trials;
  std::string translation_reason;       // why this translation model, in words
  // Torque-free models: whether the principal axes and moments were held (from the parts
  // list) and, when estimated, whether the data determine them.
  bool inertia_held = false;
  bool inertia_determined = false;
  std::string model_reason;             // why this model, in words
  CmObservability cm;
  // Per camera: the clock offsets (held or estimated; 1-sigma 0 when held) and the rms of
  // the inlier residual components, px.
  std::vector<double> time_offsets_s;
  std::vector<double> sigma_time_offsets_s;
  std::vector<double> rms_px_per_camera;
  std::vector<ResidualRecord> residuals;
  std::vector<std::string> warnings;
  double solve_seconds = 0.0;
};

// Fits the model. Throws DataError when the sightings cannot support a fit (too few frames
// or markers for the initialisation), InputError for options or markers not in the body.
// `frames[i].camera` indexes `cameras`; every camera but the first needs world_to_camera.
// A first camera without one makes its own frame the world frame (x right, y down, z along
// the optical axis); the other cameras' poses are then relative to it.
FitResult FitFreeFlight(const std::vector<FrameSightings>& frames, const Body& body,
                        const std::vector<Camera>& cameras, const FitOptions& options);
// One camera.
FitResult FitFreeFlight(const std::vector<FrameSightings>& frames, const Body& body,
                        const Camera& camera, const FitOptions& options);

// The fit with its covariance (and the CM's) replaced by the white-noise one: what the
// uncertainty would be if the residuals were independent with one variance.
FitResult WithWhiteNoiseCovariance(FitResult fit);

}  // namespace tumbletrace
