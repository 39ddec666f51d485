#include "tumbletrace/fit/free_flight_fit.hpp"

#include <ceres/ceres.h>
#include <ceres/sphere_manifold.h>
#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <limits>
#include <map>
#include <memory>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/fit/initialise.hpp"
#include "tumbletrace/fit/moment_bounds.hpp"
#include "tumbletrace/fit/noise_model.hpp"
#include "tumbletrace/fit/robust_scale.hpp"
#include "tumbletrace/fit/reprojection_cost.hpp"
#include "tumbletrace/fit/symmetric_axes_manifold.hpp"

namespace tumbletrace {

std::string FitOptions::Validate() const {
  if (!(robust_loss_scale_px > 0)) return "robust_loss_scale_px must be positive (px)";
  if (!(outlier_threshold_sigma > 1)) return "outlier_threshold_sigma must exceed 1";
  if (min_markers_per_frame < 3) return "min_markers_per_frame must be at least 3";
  if (max_iterations < 1) return "max_iterations must be at least 1";
  if (initial_pose_frames < 3) return "initial_pose_frames must be at least 3";
  if (!(gravity_world_mps2.norm() > 0)) return "gravity must be a non-zero vector (m/s^2)";
  if (!(max_step_angle_rad > 0 && max_step_angle_rad <= 0.1)) {
    return "max_step_angle_rad must be in (0, 0.1] rad";
  }
  if (held_inertia && !(held_inertia->moments.minCoeff() > 0)) {
    return "held principal moments must be positive";
  }
  if (first_frame && last_frame && *first_frame > *last_frame) {
    return "the first frame of the window comes after its last frame";
  }
  return "";
}

namespace {

// Camera k's clock offset as given: world time = its frame time + offset.
double OffsetOf(const FitOptions& options, int camera) {
  return camera < static_cast<int>(options.time_offsets_s.size()) ? options.time_offsets_s[camera]
                                                                   : 0.0;
}

struct Sighting {
  int camera;
  int frame;
  double time_s;      // the camera's own clock
  int marker_id;
  Eigen::Vector2d pixel;
  Eigen::Vector3d marker_body_m;
  int sample = 0;     // index into the camera's torque-free trajectory
};

// The parameter blocks Ceres works on.
struct ParameterBlocks {
  ParameterBlocks(const FlightParameters& p, int cameras) : like(p), offsets(cameras, 0.0) {
    std::copy_n(p.r0_world_m.data(), 3, r0);
    std::copy_n(p.v0_world_mps.data(), 3, v0);
    std::copy_n(p.g_world_mps2.data(), 3, g);
    std::copy_n(p.q0_wxyz.data(), 4, q0);
    std::copy_n(p.omega_world_radps.data(), 3, w);
    std::copy_n(p.cm_body_m.data(), 3, c);
    std::copy_n(p.body_from_principal_wxyz.data(), 4, principal);
    std::copy_n(p.moments_sd.data(), 2, sd);
    std::copy_n(p.aero.data(), 2, aero);
    for (int k = 0; k < cameras && k < static_cast<int>(p.time_offsets_s.size()); ++k) {
      offsets[k] = p.time_offsets_s[k];
    }
  }
  FlightParameters ToParameters() const {
    FlightParameters p = like;
    p.r0_world_m = Eigen::Vector3d(r0);
    p.v0_world_mps = Eigen::Vector3d(v0);
    p.g_world_mps2 = Eigen::Vector3d(g);
    p.q0_wxyz = Eigen::Vector4d(q0).normalized();
    p.omega_world_radps = Eigen::Vector3d(w);
    p.cm_body_m = Eigen::Vector3d(c);
    p.body_from_principal_wxyz = Eigen::Vector4d(principal).normalized();
    p.moments_sd = Eigen::Vector2d(sd);
    p.aero = Eigen::Vector2d(aero);
    p.time_offsets_s = offsets;
    return p;
  }

  FlightParameters like;  // t0, model and settings
  double r0[3], v0[3], g[3], q0[4], w[3], c[3], principal[4], sd[2], aero[2];
  std::vector<double> offsets;  // one per camera; sized once (Ceres keeps the pointers)
};

// What every problem of one fit shares.
struct FitContext {
  const std::vector<Sighting>& sightings;
  const std::vector<Camera>& cameras;
  const FitOptions& options;
  double t0_s;
  std::vector<std::shared_ptr<TorqueFreeTrajectory>> trajectories;  // per camera
  std::vector<std::shared_ptr<AeroTrajectory>> paths;                // per camera, same samples
};

// A block Ceres estimates and where its tangent goes in the covariance layout
// (CovarianceBlock): layout = embed * tangent.
struct ActiveBlock {
  double* data;
  int layout;
  Eigen::MatrixXd embed;
  int tangent() const { return static_cast<int>(embed.cols()); }
};

struct ModelProblem {
  std::unique_ptr<ceres::Problem> problem;
  std::vector<ActiveBlock> active;
};

// Builds the problem of one rotation model (and the translation model of `b`'s
// parameters) over the sightings flagged in `use`. The
// gauge: the world frame is fixed by the cameras' poses and gravity, the body frame by the
// marker layout, the clock by the first camera. Nothing else is fixed, so a spin about an
// axis fixed in space leaves one direction of c (with r0) free: Levenberg-Marquardt's
// damping keeps it at its initial value, and the covariance step reports it as
// unobservable instead of giving it a number.
ModelProblem BuildProblem(const FitContext& ctx, RotationModel model, const std::vector<bool>& use,
                          bool robust, ParameterBlocks* b) {
  ceres::Problem::Options problem_options;
  problem_options.manifold_ownership = ceres::TAKE_OWNERSHIP;
  ModelProblem out;
  out.problem = std::make_unique<ceres::Problem>(problem_options);
  ceres::Problem& problem = *out.problem;
  const bool torque_free = model != RotationModel::kConstantSpin;
  const TranslationModel translation = b->like.translation_model;
  const bool in_air = translation != TranslationModel::kVacuum;
  if (translation == TranslationModel::kDrag) b->aero[1] = 0.0;
  for (size_t i = 0; i < ctx.sightings.size(); ++i) {
    if (!use[i]) continue;
    const Sighting& s = ctx.sightings[i];
    const Camera& camera = ctx.cameras[s.camera];
    SightingGeometry geometry{s.pixel, s.marker_body_m, s.time_s - ctx.t0_s, camera.intrinsics,
                              camera.camera_from_world.value_or(RigidTransform{})};
    ceres::LossFunction* loss =
        robust ? new ceres::HuberLoss(ctx.options.robust_loss_scale_px) : nullptr;
    double* offset = &b->offsets[s.camera];
    if (torque_free && in_air) {
      problem.AddResidualBlock(
          AeroTorqueFreeReprojectionCost::Create(std::move(geometry), ctx.trajectories[s.camera],
                                                 ctx.paths[s.camera], s.sample),
          loss, b->r0, b->v0, b->g, b->q0, b->w, b->c, offset, b->principal, b->sd, b->aero);
    } else if (in_air) {
      problem.AddResidualBlock(
          AeroReprojectionCost::Create(std::move(geometry), ctx.paths[s.camera], s.sample), loss,
          b->r0, b->v0, b->g, b->q0, b->w, b->c, offset, b->aero);
    } else if (torque_free) {
      problem.AddResidualBlock(TorqueFreeReprojectionCost<>::Create(
                                   std::move(geometry), ctx.trajectories[s.camera], s.sample),
                               loss, b->r0, b->v0, b->g, b->q0, b->w, b->c, offset, b->principal,
                               b->sd);
    } else {
      problem.AddResidualBlock(MarkerReprojectionCost<>::Create(std::move(geometry)), loss, b->r0,
                               b->v0, b->g, b->q0, b->w, b->c, offset);
    }
  }
  const auto identity = [](int n) { return Eigen::MatrixXd::Identity(n, n); };
  problem.SetManifold(b->q0, new ceres::QuaternionManifold);
  out.active = {{b->r0, kR0, identity(3)}, {b->v0, kV0, identity(3)}};
  if (ctx.options.gravity_mode == GravityMode::kFixed) {
    problem.SetParameterBlockConstant(b->g);
  } else if (ctx.options.gravity_mode == GravityMode::kDirection) {
    // Only the direction: the magnitude is the session's. The world frame is then fixed by
    // the (first) camera alone and g's two tangent directions are estimated with the rest.
    // Layout = the manifold's Plus Jacobian (3 x 2) times its tangent.
    auto* sphere = new ceres::SphereManifold<3>;
    problem.SetManifold(b->g, sphere);
    Eigen::Matrix<double, 3, 2, Eigen::RowMajor> plus_jacobian;
    sphere->PlusJacobian(b->g, plus_jacobian.data());
    out.active.push_back({b->g, kG, plus_jacobian});
  } else {
    out.active.push_back({b->g, kG, identity(3)});
  }
  out.active.push_back({b->q0, kQ0, identity(3)});
  out.active.push_back({b->w, kOmega, identity(3)});
  out.active.push_back({b->c, kCm, identity(3)});
  if (torque_free) {
    if (ctx.options.held_inertia) {
      problem.SetParameterBlockConstant(b->principal);
      problem.SetParameterBlockConstant(b->sd);
    } else if (model == RotationModel::kSymmetricTop) {
      // Tangent: rotations about principal axes 1 and 2 (full angles); the layout's is
      // Ceres' quaternion tangent in the body frame (half angles): embed = [a1 a2] / 2.
      problem.SetManifold(b->principal, new SymmetricAxesManifold);
      problem.SetManifold(b->sd, new ceres::SubsetManifold(2, {1}));
      BoundMoments(&problem, b->sd, true);
      const Eigen::Matrix3d axes = b->ToParameters().BodyFromPrincipal();
      out.active.push_back({b->principal, kPrincipal, 0.5 * axes.leftCols(2)});
      out.active.push_back({b->sd, kMoments, Eigen::MatrixXd::Identity(2, 1)});
    } else {
      problem.SetManifold(b->principal, new ceres::QuaternionManifold);
      BoundMoments(&problem, b->sd, false);
      out.active.push_back({b->principal, kPrincipal, identity(3)});
      out.active.push_back({b->sd, kMoments, identity(2)});
    }
  }
  if (translation == TranslationModel::kDrag) {
    problem.SetManifold(b->aero, new ceres::SubsetManifold(2, {1}));
    out.active.push_back({b->aero, kAero, Eigen::MatrixXd::Identity(2, 1)});
  } else if (translation == TranslationModel::kDragLift) {
    out.active.push_back({b->aero, kAero, identity(2)});
  }
  for (size_t k = 0; k < b->offsets.size(); ++k) {
    double* offset = &b->offsets[k];
    if (!problem.HasParameterBlock(offset)) continue;
    if (k == 0 || !ctx.options.estimate_time_offsets) {
      problem.SetParameterBlockConstant(offset);
    } else {
      out.active.push_back({offset, kTimeOffsets + static_cast<int>(k), identity(1)});
    }
  }
  return out;
}

// kPrecise: the solution the covariance is taken at. kComparison: the robust passes and
// the fits of the models the BIC compares, which need the cost to ~1e-9 relative, not the
// parameters to the last digit (a torque-free model the data do not determine creeps along
// its flat directions for a hundred iterations at the precise tolerances).
enum class Precision { kComparison, kPrecise };

constexpr double kRoundOffGradient = 1e-6;

ceres::Solver::Summary Solve(ceres::Problem* problem, const FitOptions& options,
                             Precision precision = Precision::kPrecise) {
  ceres::Solver::Options solver;
  solver.linear_solver_type = ceres::DENSE_QR;
  const bool precise = precision == Precision::kPrecise;
  // A robust pass or a comparison needs no more: a torque-free model the data do not
  // determine can otherwise creep along its flat directions for a hundred iterations.
  solver.max_num_iterations = precise ? options.max_iterations : std::min(options.max_iterations, 30);
  // Ceres' default tolerances (1e-6 on the cost) stop far from the optimum of a problem
  // this well conditioned; these stop at the limit of double precision instead.
  solver.function_tolerance = precise ? 1e-15 : 1e-9;
  solver.gradient_tolerance = precise ? 1e-15 : 1e-10;
  solver.parameter_tolerance = precise ? 1e-14 : 1e-8;
  solver.num_threads = 1;
  solver.logging_type = ceres::SILENT;
  ceres::Solver::Summary summary;
  ceres::Solve(solver, problem, &summary);
  // At the precise tolerances a fit that has reached its minimum can go on proposing steps
  // whose cost changes are round-off (1e-14 relative), all rejected, until the trust region
  // collapses and Ceres reports the steps invalid (FAILURE). Such a point is the optimum:
  // its gradient is at the floor (|J^T r|_max <= 1e-6, against 1 to 100 at a start), the
  // cost no higher than at the start.
  if (summary.termination_type == ceres::FAILURE && !summary.iterations.empty() &&
      summary.iterations.back().gradient_max_norm <= kRoundOffGradient &&
      summary.final_cost <= summary.initial_cost) {
    summary.termination_type = ceres::CONVERGENCE;
    summary.message += " (at the round-off floor of the gradient: taken as converged)";
  }
  return summary;
}

// Residuals of every sighting (predicted - observed), one integration for all.
std::vector<Eigen::Vector2d> Residuals(const FitContext& ctx, const FlightParameters& p) {
  const size_t n = ctx.sightings.size();
  std::vector<double> times(n);
  for (size_t i = 0; i < n; ++i) {
    times[i] = ctx.sightings[i].time_s + p.TimeOffsetS(ctx.sightings[i].camera);
  }
  std::vector<Eigen::Matrix3d> rotations;
  p.RotationAt(times, &rotations, nullptr);
  std::vector<Eigen::Vector3d> positions;
  p.TranslationAt(times, &positions, nullptr);
  std::vector<Eigen::Vector2d> r(n);
  for (size_t i = 0; i < n; ++i) {
    const Sighting& s = ctx.sightings[i];
    const Eigen::Vector3d x_world = positions[i] + rotations[i] * (s.marker_body_m - p.cm_body_m);
    Eigen::Vector2d predicted;
    if (ProjectWorldPoint(ctx.cameras[s.camera], x_world, &predicted)) {
      r[i] = predicted - s.pixel;
    } else {
      r[i] = Eigen::Vector2d::Constant(std::numeric_limits<double>::infinity());
    }
  }
  return r;
}

// Each sighting's group for the outlier test: its camera x marker, numbered from 0.
std::vector<int> MarkerGroups(const std::vector<Sighting>& sightings) {
  std::map<std::pair<int, int>, int> index;
  std::vector<int> group;
  group.reserve(sightings.size());
  for (const Sighting& s : sightings) {
    group.push_back(index.emplace(std::make_pair(s.camera, s.marker_id),
                                  static_cast<int>(index.size())).first->second);
  }
  return group;
}

// Dense Jacobian of all residuals in the tangent spaces of the active blocks (columns in
// their order).
Eigen::MatrixXd DenseJacobian(const ModelProblem& mp) {
  ceres::Problem::EvaluateOptions eval;
  int columns = 0;
  for (const ActiveBlock& a : mp.active) {
    eval.parameter_blocks.push_back(a.data);
    columns += a.tangent();
  }
  ceres::CRSMatrix crs;
  mp.problem->Evaluate(eval, nullptr, nullptr, nullptr, &crs);
  Eigen::MatrixXd j = Eigen::MatrixXd::Zero(crs.num_rows, columns);
  for (int row = 0; row < crs.num_rows; ++row) {
    for (int k = crs.rows[row]; k < crs.rows[row + 1]; ++k) j(row, crs.cols[k]) = crs.values[k];
  }
  return j;
}

int ColumnOf(const ModelProblem& mp, const double* block) {
  int column = 0;
  for (const ActiveBlock& a : mp.active) {
    if (a.data == block) return column;
    column += a.tangent();
  }
  return -1;
}

// The information of the parameters in columns [first, first + size) with every other
// parameter marginalised: the Schur complement of J^T J.
Eigen::MatrixXd MarginalInformation(const Eigen::MatrixXd& jacobian, int first, int size) {
  const Eigen::MatrixXd info = jacobian.transpose() * jacobian;
  std::vector<int> others;
  for (int i = 0; i < info.cols(); ++i) {
    if (i < first || i >= first + size) others.push_back(i);
  }
  const int n = static_cast<int>(others.size());
  Eigen::MatrixXd a_oo(n, n), a_oc(n, size);
  for (int i = 0; i < n; ++i) {
    for (int j = 0; j < n; ++j) a_oo(i, j) = info(others[i], others[j]);
    a_oc.row(i) = info.block(others[i], first, 1, size);
  }
  return info.block(first, first, size, size) -
         a_oc.transpose() * a_oo.completeOrthogonalDecomposition().solve(a_oc);
}

// Whether the data determine a torque-free model's principal axes and moments (`size`
// columns from `first`, the principal frame's tangent then [s, d]), with every other
// parameter marginalised: in radians and moment ratios alike, a 1-sigma of 0.2 in some
// direction of them is no determination.
bool InertiaDetermined(const Eigen::MatrixXd& jacobian, int first, int size, double sigma_px) {
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(MarginalInformation(jacobian, first, size));
  const double largest = std::max(eig.eigenvalues().maxCoeff(), 1e-300);
  const double smallest_sigma = sigma_px / std::sqrt(std::max(eig.eigenvalues().minCoeff(), 1e-300));
  return eig.eigenvalues().minCoeff() > 1e-9 * largest && smallest_sigma < 0.2;
}

// The information of c with every other parameter marginalised, its eigen-structure, and
// the unobservable directions.
CmObservability AnalyseCm(const Eigen::MatrixXd& jacobian, int cm_column, double sigma_px,
                          double layout_size_m, const FitOptions& options) {
  const Eigen::Matrix3d schur = MarginalInformation(jacobian, cm_column, 3);
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eig(0.5 * (schur + schur.transpose()));
  CmObservability out;
  out.information_eigenvalues = eig.eigenvalues() / (sigma_px * sigma_px);
  out.information_eigenvectors = eig.eigenvectors();
  const double largest = std::max(eig.eigenvalues().maxCoeff(), 1e-300);
  for (int k = 0; k < 3; ++k) {
    const double lambda = eig.eigenvalues()[k];
    const double sigma_m =
        lambda > 0 ? sigma_px / std::sqrt(lambda) : std::numeric_limits<double>::infinity();
    if (lambda < options.unobservable_relative_information * largest || sigma_m > layout_size_m) {
      Eigen::Vector3d u = eig.eigenvectors().col(k).normalized();
      // A sign convention for a direction: its largest component positive.
      Eigen::Index i_max;
      u.cwiseAbs().maxCoeff(&i_max);
      if (u[i_max] < 0) u = -u;
      out.unobservable_body.push_back(u);
    }
  }
  return out;
}

double LayoutSize(const Body& body) {
  double size = 0.0;
  for (const Marker& a : body.markers) {
    for (const Marker& b : body.markers) size = std::max(size, (a.at_body_m - b.at_body_m).norm());
  }
  return size;
}

// The residuals of the problem's rows, in the order of DenseJacobian's rows.
Eigen::VectorXd EvaluateResiduals(const ModelProblem& mp) {
  std::vector<double> residuals;
  mp.problem->Evaluate(ceres::Problem::EvaluateOptions{}, nullptr, &residuals, nullptr, nullptr);
  return Eigen::Map<const Eigen::VectorXd>(residuals.data(), static_cast<Eigen::Index>(residuals.size()));
}

// Each residual row's series and frame: the used sightings in order, x then y.
std::vector<NoiseRow> NoiseRowsOf(const std::vector<Sighting>& sightings,
                                  const std::vector<bool>& use) {
  std::vector<NoiseRow> rows;
  for (size_t i = 0; i < sightings.size(); ++i) {
    if (!use[i]) continue;
    for (int coordinate = 0; coordinate < 2; ++coordinate) {
      rows.push_back({sightings[i].camera, sightings[i].marker_id, coordinate, sightings[i].frame});
    }
  }
  return rows;
}

// The map from the active blocks' tangent columns (DenseJacobian's order) to the
// covariance layout (CovarianceBlock): layout = embed * tangent.
Eigen::MatrixXd LayoutEmbedding(const ModelProblem& mp, int layout_size) {
  int columns = 0;
  for (const ActiveBlock& a : mp.active) columns += a.tangent();
  Eigen::MatrixXd embed = Eigen::MatrixXd::Zero(layout_size, columns);
  int column = 0;
  for (const ActiveBlock& a : mp.active) {
    embed.block(a.layout, column, a.embed.rows(), a.tangent()) = a.embed;
    column += a.tangent();
  }
  return embed;
}

// (J^T J)^+ in the tangent space of the active blocks (Ceres' dense SVD, the
// `null_space_rank` smallest eigenvalues dropped). Throws DataError when it fails.
Eigen::MatrixXd InformationPseudoInverse(const ModelProblem& mp, int null_space_rank) {
  ceres::Covariance::Options cov_options;
  cov_options.algorithm_type = ceres::DENSE_SVD;
  cov_options.null_space_rank = null_space_rank;
  cov_options.min_reciprocal_condition_number = 1e-20;
  cov_options.num_threads = 1;
  ceres::Covariance covariance(cov_options);
  std::vector<std::pair<const double*, const double*>> pairs;
  std::vector<const double*> blocks;
  int columns = 0;
  for (size_t i = 0; i < mp.active.size(); ++i) {
    blocks.push_back(mp.active[i].data);
    columns += mp.active[i].tangent();
    for (size_t j = i; j < mp.active.size(); ++j) pairs.emplace_back(mp.active[i].data, mp.active[j].data);
  }
  Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> out(columns, columns);
  if (!covariance.Compute(pairs, mp.problem.get()) ||
      !covariance.GetCovarianceMatrixInTangentSpace(blocks, out.data())) {
    throw DataError("the covariance of the fit could not be computed (the problem is singular "
                    "beyond the unobservable CM directions)");
  }
  return out;
}

// The covariance of c's observable part: projected off the unobservable directions.
Eigen::Matrix3d ObservableCmCovariance(const Eigen::MatrixXd& covariance, const CmObservability& cm) {
  Eigen::Matrix3d projector = Eigen::Matrix3d::Identity();
  for (const Eigen::Vector3d& u : cm.unobservable_body) projector -= u * u.transpose();
  return projector * covariance.block<3, 3>(kCm, kCm) * projector.transpose();
}

// One rotation model fitted: its parameters, the sightings it kept and Ceres' summary.
struct ModelFit {
  RotationModel model = RotationModel::kConstantSpin;
  FlightParameters parameters;
  std::vector<bool> use;
  ceres::Solver::Summary summary;
  double sum_sq_px2 = 0.0;
  int parameter_count = 0;
};

// Fits one model from `start`. With `reject_outliers`: a robust pass (Huber) over every
// sighting, then plain least squares on the sightings within `outlier_threshold_sigma`
// robust standard deviations, again while that set changes (at most three rounds).
// Without: plain least squares on `use` as given.
ModelFit FitModel(const FitContext& ctx, RotationModel model, const FlightParameters& start,
                  std::vector<bool> use, bool reject_outliers, Precision precision) {
  FlightParameters from = start;
  from.rotation_model = model;
  ParameterBlocks blocks(from, static_cast<int>(ctx.cameras.size()));
  ModelFit fit;
  fit.model = model;
  if (reject_outliers) {
    std::fill(use.begin(), use.end(), true);
    ModelProblem robust = BuildProblem(ctx, model, use, true, &blocks);
    Solve(robust.problem.get(), ctx.options, Precision::kComparison);
    const std::vector<int> group = MarkerGroups(ctx.sightings);
    for (int round = 0; round < 3; ++round) {
      const std::vector<Eigen::Vector2d> r = Residuals(ctx, blocks.ToParameters());
      // Each marker against its own robust scale (fit/robust_scale.hpp), from every
      // sighting in the first round and from the inliers after.
      const std::vector<double> sigma = RobustSigmaPerGroupPx(
          r, group, round == 0 ? std::vector<bool>{} : use, ctx.options.outlier_scale);
      std::vector<bool> next(r.size());
      for (size_t i = 0; i < r.size(); ++i) {
        next[i] = r[i].norm() <= ctx.options.outlier_threshold_sigma * std::max(sigma[i], 1e-6);
      }
      if (round > 0 && next == use) break;
      use = next;
      ModelProblem mp = BuildProblem(ctx, model, use, false, &blocks);
      fit.summary = Solve(mp.problem.get(), ctx.options, precision);
      fit.parameter_count = 0;
      for (const ActiveBlock& a : mp.active) fit.parameter_count += a.tangent();
    }
  } else {
    ModelProblem mp = BuildProblem(ctx, model, use, false, &blocks);
    fit.summary = Solve(mp.problem.get(), ctx.options, precision);
    for (const ActiveBlock& a : mp.active) fit.parameter_count += a.tangent();
  }
  fit.parameters = blocks.ToParameters();
  fit.use = use;
  const std::vector<Eigen::Vector2d> r = Residuals(ctx, fit.parameters);
  for (size_t i = 0; i < r.size(); ++i) {
    if (use[i]) fit.sum_sq_px2 += r[i].squaredNorm();
  }
  return fit;
}

// Bayesian information criterion of a Gaussian model with unknown variance:
// n ln(RSS / n) + k ln n (Schwarz 1978; the usual form, common practice).
double Bic(double sum_sq, int n_residuals, int parameters) {
  const double n = n_residuals;
  return n * std::log(std::max(sum_sq, 1e-300) / n) + parameters * std::log(n);
}

// The automatic choice among the rotation models (FitOptions::rotation = kAuto):
// 1. the constant spin and the free top are fitted (robust pass, outliers set aside), the
//    free top from the poses and from the steady spin, the better per sighting kept;
// 2. on the free top's inliers (the richest model fits every kind of throw) the constant
//    spin is fitted again, and both are scored by BIC = n ln(RSS/n) + k ln n;
// 3. the symmetric top lies between them (RSS_free <= RSS_symmetric <= RSS_spin), so its
//    BIC is at least n ln(RSS_free/n) + k_symmetric ln n: when that bound already exceeds
//    the better of the two, it cannot win and is not fitted; nor when the free top's two
//    closest principal moments differ by more than 2 sqrt(2 ln n) of their standard
//    deviation (the Wald statistic of "equal moments" then exceeds four times the BIC
//    penalty of the two extra parameters); otherwise it is fitted and scored;
// 4. the model with the lowest BIC wins, a torque-free one only when its principal axes are
//    determined (FitOptions::torque_free_needs_axes).
ModelFit ChooseRotationModel(const FitContext& ctx, const std::vector<BodyPose>& poses,
                             const FlightParameters& initial, FitResult* result) {
  const std::vector<bool> all(ctx.sightings.size(), true);
  const ModelFit first_spin =
      FitModel(ctx, RotationModel::kConstantSpin, initial, all, true, Precision::kComparison);
  ModelFit free =
      FitModel(ctx, RotationModel::kFreeTop,
               InitialiseTorqueFree(poses, first_spin.parameters, RotationModel::kFreeTop, ctx.options),
               all, true, Precision::kComparison);
  // The free top contains the constant spin (a steady spin about a principal axis), and a
  // start from poorly determined poses (a layout of nearly collinear markers) can stop in
  // another valley: on one study wobble at 0.114 px rms with a CM component 20 sigma off,
  // or above the constant spin itself. So the free top is also fitted from the steady spin,
  // and the better of the two per sighting kept is taken (on that wobble: 0.087 px, every
  // component within 1.2 sigma).
  {
    const ModelFit again = FitModel(
        ctx, RotationModel::kFreeTop,
        SteadySpinStart(first_spin.parameters, RotationModel::kFreeTop, ctx.options), all, true,
        Precision::kComparison);
    const auto per_sighting = [](const ModelFit& f) {
      return f.sum_sq_px2 / std::max<double>(1.0, std::count(f.use.begin(), f.use.end(), true));
    };
    if (per_sighting(again) < per_sighting(free)) free = again;
  }
  const ModelFit spin = FitModel(ctx, RotationModel::kConstantSpin, first_spin.parameters, free.use,
                                 false, Precision::kComparison);
  const int n = 2 * static_cast<int>(std::count(free.use.begin(), free.use.end(), true));
  std::vector<ModelFit> fits = {spin, free};
  std::string skipped;
  bool free_determined = true;
  if (!ctx.options.held_inertia) {
    const int symmetric_parameters = free.parameter_count - 2;
    const double bound = Bic(free.sum_sq_px2, n, symmetric_parameters);
    const double best = std::min(Bic(spin.sum_sq_px2, n, spin.parameter_count),
                                 Bic(free.sum_sq_px2, n, free.parameter_count));
    // The Wald statistic of the closest pair of moments, from the free top's information.
    double z = 0.0;
    {
      ParameterBlocks blocks(free.parameters, static_cast<int>(ctx.cameras.size()));
      ModelProblem mp = BuildProblem(ctx, RotationModel::kFreeTop, free.use, false, &blocks);
      const Eigen::MatrixXd jacobian = DenseJacobian(mp);
      const Eigen::Matrix2d info = MarginalInformation(jacobian, ColumnOf(mp, blocks.sd), 2);
      const double s2 = free.sum_sq_px2 / std::max(1, n - free.parameter_count);
      free_determined = InertiaDetermined(jacobian, ColumnOf(mp, blocks.principal), 3, std::sqrt(s2));
      const Eigen::Matrix2d cov = s2 * info.completeOrthogonalDecomposition().pseudoInverse();
      // Differences of the moments (s - d, s + d, 1) as gradients in (s, d).
      const double s = blocks.sd[0], d = blocks.sd[1];
      const std::pair<double, Eigen::Vector2d> pairs[] = {
          {2 * d, {0, 2}}, {1 - s - d, {-1, -1}}, {1 - s + d, {-1, 1}}};
      z = std::numeric_limits<double>::infinity();
      for (const auto& [difference, gradient] : pairs) {
        const double sigma = std::sqrt(std::max(gradient.dot(cov * gradient), 1e-300));
        z = std::min(z, std::abs(difference) / sigma);
      }
    }
    if (bound >= best) {
      skipped = fmt::format("; symmetric not fitted: its BIC cannot be below {:.1f} (the free "
                            "top's residuals with its parameter count), above the best",
                            bound);
    } else if (z > 2 * std::sqrt(2 * std::log(static_cast<double>(n)))) {
      skipped = fmt::format("; symmetric not fitted: the free top's two closest principal "
                            "moments differ by {:.1f} standard deviations",
                            z);
    } else {
      fits.insert(fits.begin() + 1,
                  FitModel(ctx, RotationModel::kSymmetricTop, SymmetricStart(free.parameters),
                           free.use, false, Precision::kComparison));
    }
  }
  // A torque-free model whose principal axes the data do not determine (a spin about a
  // principal axis: the other two axes can turn about it freely) says nothing the constant
  // spin does not: what lowers its sum of squares is the noise and the centres' own errors,
  // which its free directions follow (they would then carry the CM's component along the
  // spin axis, unobservable otherwise). It is scored but cannot win. (The axes alone are
  // judged: the moments of a flip seen over part of the flight, in the window search's first
  // trials, can be loosely held while the axes are not.)
  size_t best = 0;
  for (size_t m = 0; m < fits.size(); ++m) {
    FitResult::ModelTrial trial;
    trial.model = fits[m].model;
    trial.parameters = fits[m].parameter_count;
    trial.sum_sq_px2 = fits[m].sum_sq_px2;
    trial.bic = Bic(fits[m].sum_sq_px2, n, fits[m].parameter_count);
    trial.converged = fits[m].summary.termination_type == ceres::CONVERGENCE;
    result->model_trials.push_back(trial);
    const bool eligible = fits[m].model == RotationModel::kConstantSpin || free_determined ||
                          !ctx.options.torque_free_needs_axes;
    if (eligible && trial.bic < result->model_trials[best].bic) best = m;
  }
  if (!free_determined && ctx.options.torque_free_needs_axes) {
    skipped += "; the torque-free models cannot win: the flight does not determine the principal "
               "axes (the body turned about a principal axis)";
  }
  std::string others;
  for (size_t m = 0; m < fits.size(); ++m) {
    if (m == best) continue;
    others += fmt::format("{}{} by {:.1f}", others.empty() ? "" : ", ",
                          RotationModelName(fits[m].model),
                          result->model_trials[m].bic - result->model_trials[best].bic);
  }
  result->model_reason = fmt::format(
      "{} has the lowest Bayesian information criterion, BIC = n ln(RSS/n) + k ln n over the "
      "same {} residual components: lower than {}{}",
      RotationModelName(fits[best].model), n, others, skipped);
  return fits[best];
}

// The automatic choice among the translation models (FitOptions::drag = kAuto), with the
// rotation model already chosen (compared with k free, so that a strong drag is not taken
// up by the rotation or set aside as outliers) and on its inliers: vacuum, quadratic drag
// (one more parameter, k) and, for the constant-spin model, drag with Magnus lift (k_L) are
// fitted and scored by the same BIC; the lowest wins. For a thrown body with no measurable
// drag the penalty ln n per parameter (about 9 for 4000 residual components) keeps the
// vacuum model unless k lowers the sum of squares by that many noise variances.
ModelFit ChooseTranslationModel(const FitContext& ctx, const ModelFit& drag, FitResult* result) {
  FlightParameters start = drag.parameters;
  start.translation_model = TranslationModel::kVacuum;
  start.aero.setZero();
  std::vector<ModelFit> fits = {
      FitModel(ctx, drag.model, start, drag.use, false, Precision::kComparison), drag};
  std::string lift_note;
  if (drag.model == RotationModel::kConstantSpin) {
    FlightParameters lift = drag.parameters;
    lift.translation_model = TranslationModel::kDragLift;
    lift.aero[1] = 0.0;
    fits.push_back(FitModel(ctx, drag.model, lift, drag.use, false, Precision::kComparison));
  } else {
    lift_note = "; drag with lift not tried: the lift model needs a constant spin axis";
  }
  const int n = 2 * static_cast<int>(std::count(drag.use.begin(), drag.use.end(), true));
  size_t best = 0;
  for (size_t m = 0; m < fits.size(); ++m) {
    FitResult::TranslationTrial trial;
    trial.model = fits[m].parameters.translation_model;
    trial.parameters = fits[m].parameter_count;
    trial.sum_sq_px2 = fits[m].sum_sq_px2;
    trial.bic = Bic(fits[m].sum_sq_px2, n, fits[m].parameter_count);
    trial.converged = fits[m].summary.termination_type == ceres::CONVERGENCE;
    result->translation_trials.push_back(trial);
    // A trial that did not converge is no minimum, and its sum of squares no score: the
    // lowest BIC among the converged ones wins (among all, when none converged).
    const FitResult::TranslationTrial& leader = result->translation_trials[best];
    if ((trial.converged && !leader.converged) ||
        (trial.converged == leader.converged && trial.bic < leader.bic)) {
      best = m;
    }
  }
  // In words: "vacuum", "quadratic drag", "quadratic drag with lift".
  const auto prose = [](TranslationModel model) {
    switch (model) {
      case TranslationModel::kVacuum: return "vacuum";
      case TranslationModel::kDrag: return "quadratic drag";
      case TranslationModel::kDragLift: return "quadratic drag with lift";
    }
    return "";
  };
  std::string others;
  for (size_t m = 0; m < fits.size(); ++m) {
    if (m == best) continue;
    others += fmt::format("{}{} by {:.1f}", others.empty() ? "" : ", ",
                          prose(fits[m].parameters.translation_model),
                          result->translation_trials[m].bic - result->translation_trials[best].bic);
  }
  result->translation_reason = fmt::format(
      "{} has the lowest Bayesian information criterion over the same {} residual components: "
      "lower than {}{}",
      prose(fits[best].parameters.translation_model), n, others, lift_note);
  return fits[best];
}

}  // namespace

FitResult WithWhiteNoiseCovariance(FitResult fit) {
  fit.covariance = fit.white_noise_covariance;
  fit.cm.covariance_m2 = ObservableCmCovariance(fit.covariance, fit.cm);
  for (size_t k = 0; k < fit.sigma_time_offsets_s.size(); ++k) {
    fit.sigma_time_offsets_s[k] =
        std::sqrt(std::max(fit.covariance(kTimeOffsets + k, kTimeOffsets + k), 0.0));
  }
  fit.variance_factor_cm.setOnes();
  return fit;
}

FitResult FitFreeFlight(const std::vector<FrameSightings>& frames, const Body& body,
                        const Camera& camera, const FitOptions& options) {
  return FitFreeFlight(frames, body, std::vector<Camera>{camera}, options);
}

FitResult FitFreeFlight(const std::vector<FrameSightings>& frames, const Body& body,
                        const std::vector<Camera>& cameras, const FitOptions& options) {
  const auto start = std::chrono::steady_clock::now();
  if (const std::string why = options.Validate(); !why.empty()) {
    throw InputError("fit options: " + why);
  }
  if (cameras.empty()) throw InputError("the fit needs at least one camera");
  for (size_t k = 1; k < cameras.size(); ++k) {
    if (!cameras[k].camera_from_world) {
      throw InputError(fmt::format(
          "camera {} has no world_to_camera pose; only the first camera may lack one (its frame "
          "is then the world frame, and the others' poses are relative to it)",
          k));
    }
  }

  // The window, and the sightings in it.
  std::vector<Sighting> sightings;
  std::map<std::pair<int, int>, int> frames_in_window;  // (camera, frame)
  for (const FrameSightings& f : frames) {
    if (options.first_frame && f.frame < *options.first_frame) continue;
    if (options.last_frame && f.frame > *options.last_frame) continue;
    if (f.camera < 0 || f.camera >= static_cast<int>(cameras.size())) {
      throw InputError(fmt::format("frame {} is of camera {}, but the fit has {} camera(s)",
                                   f.frame, f.camera, cameras.size()));
    }
    for (const MarkerSighting& s : f.sightings) {
      const Marker* m = body.FindMarker(s.marker_id);
      if (m == nullptr) {
        throw InputError(fmt::format(
            "tracks: frame {} names marker {}, which the body file does not define",
            f.frame, s.marker_id));
      }
      sightings.push_back({f.camera, f.frame, f.time_s, s.marker_id, s.pixel, m->at_body_m});
      ++frames_in_window[{f.camera, f.frame}];
    }
  }
  if (frames_in_window.size() < 3) {
    throw DataError(fmt::format("the window holds {} frames with identified markers; the fit "
                                "needs at least 3",
                                frames_in_window.size()));
  }
  // The window's frames in time order (world time: the camera's clock plus its offset).
  std::vector<FrameSightings> window;
  for (const FrameSightings& f : frames) {
    if (frames_in_window.count({f.camera, f.frame})) window.push_back(f);
  }
  const auto world_time = [&](const FrameSightings& f) {
    return f.time_s + OffsetOf(options, f.camera);
  };
  std::stable_sort(window.begin(), window.end(),
                   [&](const FrameSightings& a, const FrameSightings& b) {
                     return world_time(a) < world_time(b);
                   });
  // t0 at the middle frame of the window decouples position, velocity and acceleration.
  const double t0_s = world_time(window[window.size() / 2]);

  // The torque-free rotations and the paths through air: one per camera, sampled at its
  // frame times.
  FitContext ctx{sightings, cameras, options, t0_s, {}, {}};
  for (size_t k = 0; k < cameras.size(); ++k) {
    std::map<double, int> sample_of;
    for (const Sighting& s : sightings) {
      if (s.camera == static_cast<int>(k)) sample_of.emplace(s.time_s - t0_s, 0);
    }
    std::vector<double> taus;
    for (auto& [tau, index] : sample_of) {
      index = static_cast<int>(taus.size());
      taus.push_back(tau);
    }
    for (Sighting& s : sightings) {
      if (s.camera == static_cast<int>(k)) s.sample = sample_of.at(s.time_s - t0_s);
    }
    ctx.paths.push_back(std::make_shared<AeroTrajectory>(
        taus, std::array<double, 3>{options.wind_world_mps.x(), options.wind_world_mps.y(),
                                    options.wind_world_mps.z()}));
    ctx.trajectories.push_back(
        std::make_shared<TorqueFreeTrajectory>(std::move(taus), options.max_step_angle_rad));
  }

  // The start needs poses from a few dozen frames per camera spread over the window, not
  // all of them: PnP dominates the cost of the fit otherwise. When fewer than kStartPoses
  // of the frames so spread show enough markers for a pose (on a throw whose markers are
  // hidden or in shadow most of the time), the start takes every frame of the window that
  // does, and, still short, borrows the nearest ones outside it: they only start the fit,
  // which then sees the window's sightings alone. (Choosing among the posable frames
  // always changed the start, and with it the rotation model chosen, of throws that had
  // enough: kept for the short ones.)
  constexpr size_t kStartPoses = 6;
  std::vector<BodyPose> poses;
  const auto posable = [&](const FrameSightings& f) {
    return CanPoseFrame(f, body, options.min_markers_per_frame);
  };
  const auto spread = [&](const std::vector<FrameSightings>& of_camera) {
    std::vector<FrameSightings> sampled;
    const size_t stride = std::max<size_t>(1, of_camera.size() / options.initial_pose_frames);
    for (size_t i = 0; i < of_camera.size(); i += stride) {
      sampled.push_back(of_camera[i]);
      sampled.back().time_s = world_time(of_camera[i]);
    }
    return sampled;
  };
  for (size_t k = 0; k < cameras.size(); ++k) {
    const int camera = static_cast<int>(k);
    std::vector<FrameSightings> of_camera;
    for (const FrameSightings& f : window) {
      if (f.camera == camera) of_camera.push_back(f);
    }
    std::vector<FrameSightings> sampled = spread(of_camera);
    if (static_cast<size_t>(std::count_if(sampled.begin(), sampled.end(), posable)) < kStartPoses) {
      std::vector<FrameSightings> candidates;
      for (const FrameSightings& f : of_camera) {
        if (posable(f)) candidates.push_back(f);
      }
      if (candidates.size() < kStartPoses && !window.empty()) {
        const double from_s = world_time(window.front()), to_s = world_time(window.back());
        std::vector<std::pair<double, const FrameSightings*>> outside;  // (distance, frame)
        for (const FrameSightings& f : frames) {
          const double t = world_time(f);
          if (f.camera != camera || (t >= from_s && t <= to_s) || !posable(f)) continue;
          outside.emplace_back(t < from_s ? from_s - t : t - to_s, &f);
        }
        std::stable_sort(outside.begin(), outside.end(),
                         [](const auto& a, const auto& b) { return a.first < b.first; });
        for (size_t i = 0; i < outside.size() && candidates.size() < kStartPoses; ++i) {
          candidates.push_back(*outside[i].second);
        }
        std::stable_sort(candidates.begin(), candidates.end(),
                         [&](const FrameSightings& a, const FrameSightings& b) { return world_time(a) < world_time(b); });
      }
      sampled = spread(candidates);
    }
    for (BodyPose& pose : EstimateFramePoses(sampled, body, cameras[k],
                                             options.min_markers_per_frame)) {
      poses.push_back(pose);
    }
  }
  std::stable_sort(poses.begin(), poses.end(),
                   [](const BodyPose& a, const BodyPose& b) { return a.time_s < b.time_s; });
  FlightParameters initial = InitialiseFlight(poses, t0_s, options);
  initial.max_step_angle_rad = options.max_step_angle_rad;
  initial.wind_world_mps = options.wind_world_mps;
  // With the automatic choice the rotation models are compared with quadratic drag (k
  // free, from 0): a vacuum path would leave a strong drag's deceleration to the rotation
  // and to the outlier step, and the translation choice is made on the inliers found here.
  switch (options.drag) {
    case DragChoice::kAuto:
    case DragChoice::kQuadratic: initial.translation_model = TranslationModel::kDrag; break;
    case DragChoice::kQuadraticLift: initial.translation_model = TranslationModel::kDragLift; break;
    case DragChoice::kNone: initial.translation_model = TranslationModel::kVacuum; break;
  }
  initial.time_offsets_s.resize(cameras.size());
  for (size_t k = 0; k < cameras.size(); ++k) initial.time_offsets_s[k] = OffsetOf(options, static_cast<int>(k));

  FitResult result;
  // The window is reported in the frames of the first camera with sightings in it (the
  // first of the session's list sets the clock).
  {
    int reference = window.front().camera;
    for (const FrameSightings& f : window) reference = std::min(reference, f.camera);
    std::vector<const FrameSightings*> of_reference;
    for (const FrameSightings& f : window) {
      if (f.camera == reference) of_reference.push_back(&f);
    }
    result.first_frame = of_reference.front()->frame;
    result.first_time_s = world_time(*of_reference.front());
    result.last_frame = of_reference.back()->frame;
  }
  result.frames_used = static_cast<int>(window.size());

  // The rotation models: the one asked for, or all three and the choice by BIC on a
  // common set of inliers (those of the richest model, which fits every kind of throw).
  const std::vector<bool> all(sightings.size(), true);
  ModelFit chosen;
  switch (options.rotation) {
    case RotationChoice::kConstantSpin:
      chosen = FitModel(ctx, RotationModel::kConstantSpin, initial, all, true, Precision::kPrecise);
      break;
    case RotationChoice::kSymmetricTop:
    case RotationChoice::kFreeTop: {
      const RotationModel model = options.rotation == RotationChoice::kFreeTop
                                      ? RotationModel::kFreeTop
                                      : RotationModel::kSymmetricTop;
      chosen = FitModel(ctx, model, InitialiseTorqueFree(poses, initial, model, options), all,
                        true, Precision::kPrecise);
      break;
    }
    case RotationChoice::kAuto: {
      chosen = ChooseRotationModel(ctx, poses, initial, &result);
      break;
    }
  }
  if (options.rotation != RotationChoice::kAuto) {
    result.model_reason = fmt::format("{} was asked for", RotationModelName(chosen.model));
  }
  if (options.drag == DragChoice::kAuto) {
    chosen = ChooseTranslationModel(ctx, chosen, &result);
  } else {
    result.translation_reason = fmt::format(
        "drag model {} was asked for", TranslationModelName(chosen.parameters.translation_model));
  }
  if (options.rotation == RotationChoice::kAuto || options.drag == DragChoice::kAuto) {
    // The chosen models to full precision on the common inliers.
    chosen = FitModel(ctx, chosen.model, chosen.parameters, chosen.use, false, Precision::kPrecise);
  }

  // The chosen model's problem again (plain least squares on its inliers) for the
  // Jacobian and the covariance.
  ParameterBlocks blocks(chosen.parameters, static_cast<int>(cameras.size()));
  ModelProblem mp = BuildProblem(ctx, chosen.model, chosen.use, false, &blocks);
  const std::vector<bool>& use = chosen.use;
  const FlightParameters fitted = chosen.parameters;
  result.parameters = fitted;
  result.converged = chosen.summary.termination_type == ceres::CONVERGENCE;
  result.termination = chosen.summary.message;
  result.iterations = static_cast<int>(chosen.summary.iterations.size());
  result.observations = static_cast<int>(sightings.size());
  result.outliers = static_cast<int>(std::count(use.begin(), use.end(), false));

  // Residuals and the noise estimate: s^2 = sum r^2 / (n_residuals - n_parameters).
  const std::vector<Eigen::Vector2d> r = Residuals(ctx, fitted);
  double sum_sq = 0.0;
  int n_inliers = 0;
  for (size_t i = 0; i < sightings.size(); ++i) {
    result.residuals.push_back({sightings[i].camera, sightings[i].frame, sightings[i].time_s,
                                sightings[i].marker_id, sightings[i].pixel, r[i], !use[i]});
    if (use[i]) {
      sum_sq += r[i].squaredNorm();
      ++n_inliers;
    }
  }
  Eigen::MatrixXd jacobian = DenseJacobian(mp);
  // Parameters actually determined: tangent size less the fixed and the null directions.
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(jacobian);
  const Eigen::VectorXd sv = svd.singularValues();
  int rank = 0;
  for (int i = 0; i < sv.size(); ++i) rank += sv[i] > 1e-7 * sv[0];
  result.degrees_of_freedom = 2 * n_inliers - rank;
  if (result.degrees_of_freedom <= 0) {
    throw DataError(fmt::format("{} sightings cannot determine {} parameters", n_inliers, rank));
  }
  result.rms_px = std::sqrt(sum_sq / (2.0 * n_inliers));
  result.sigma_px = std::sqrt(sum_sq / result.degrees_of_freedom);
  {
    std::vector<double> sum_sq_of(cameras.size(), 0.0);
    std::vector<int> count_of(cameras.size(), 0);
    for (size_t i = 0; i < sightings.size(); ++i) {
      if (!use[i]) continue;
      sum_sq_of[sightings[i].camera] += r[i].squaredNorm();
      ++count_of[sightings[i].camera];
    }
    for (size_t k = 0; k < cameras.size(); ++k) {
      result.rms_px_per_camera.push_back(
          count_of[k] > 0 ? std::sqrt(sum_sq_of[k] / (2.0 * count_of[k])) : 0.0);
    }
  }

  // Whether the data determine the principal axes and moments of a torque-free model:
  // not when the body spun about a principal axis (then the constant-spin model says the
  // same with fewer parameters, and a fit asked to estimate them has nothing to go on).
  result.inertia_held = chosen.model != RotationModel::kConstantSpin && options.held_inertia;
  if (chosen.model != RotationModel::kConstantSpin && !options.held_inertia) {
    const int size = (chosen.model == RotationModel::kSymmetricTop) ? 3 : 5;
    result.inertia_determined =
        InertiaDetermined(jacobian, ColumnOf(mp, blocks.principal), size, result.sigma_px);
    if (!result.inertia_determined) {
      result.warnings.push_back(fmt::format(
          "The {} rotation model was fitted, but the flight does not determine the principal "
          "axes and moment ratios (the body turned about a principal axis, or too little of "
          "its wobble is seen): they are reported as null.",
          RotationModelName(chosen.model)));
    }
  }

  // Observability of the CM in the body frame.
  const double layout_size_m = std::max(LayoutSize(body), 1e-3);
  const int cm_column = ColumnOf(mp, blocks.c);
  result.cm = AnalyseCm(jacobian, cm_column, result.sigma_px, layout_size_m, options);
  if (!result.cm.unobservable_body.empty()) {
    // Fix the gauge at the representative of the CM line nearest the body origin, and take
    // the covariance there. The in-plane part of c is only determined perpendicular to the
    // fitted spin axis, whose direction is itself uncertain: elsewhere on the line, the
    // axis's uncertainty times the distance along it would be added to the in-plane
    // components (the Jacobian of a tilt then carries a lever of that distance).
    // x = r + R (m - c): c <- c - a u with r0 <- r0 - a R0 u changes no prediction.
    for (const Eigen::Vector3d& u : result.cm.unobservable_body) {
      FlightParameters p = blocks.ToParameters();
      const double a = u.dot(p.cm_body_m);
      p.cm_body_m -= a * u;
      p.r0_world_m -= a * (p.WorldFromBodyAt(t0_s) * u);
      blocks = ParameterBlocks(p, static_cast<int>(cameras.size()));
    }
    mp = BuildProblem(ctx, chosen.model, use, false, &blocks);
    jacobian = DenseJacobian(mp);
    result.cm = AnalyseCm(jacobian, cm_column, result.sigma_px, layout_size_m, options);
    result.parameters = blocks.ToParameters();
  }
  // (J^T J)^+ by Ceres (DENSE_SVD). The dense SVD drops exactly as many of the smallest
  // eigenvalues as the CM has unobservable directions (each is a gauge freedom of c with
  // r0): inverting a numerically zero eigenvalue instead would leak an arbitrary variance
  // into every parameter. (And, for a torque-free model the data do not support, its
  // undetermined directions.)
  const Eigen::MatrixXd information_pinv = InformationPseudoInverse(
      mp, std::max(static_cast<int>(result.cm.unobservable_body.size()),
                   static_cast<int>(jacobian.cols()) - rank));
  const Eigen::MatrixXd embed = LayoutEmbedding(mp, TangentSize(static_cast<int>(cameras.size())));
  result.white_noise_covariance =
      embed * (result.sigma_px * result.sigma_px * information_pinv) * embed.transpose();
  // The reported covariance: the sandwich under per-series AR(1) noise (fit/noise_model.hpp).
  result.noise = EstimateAr1Noise(EvaluateResiduals(mp), jacobian, information_pinv,
                                  NoiseRowsOf(sightings, use), options.noise_model);
  result.covariance =
      embed * SandwichCovariance(jacobian, information_pinv, result.noise) * embed.transpose();
  for (size_t k = 0; k < cameras.size(); ++k) {
    result.time_offsets_s.push_back(result.parameters.time_offsets_s[k]);
    result.sigma_time_offsets_s.push_back(
        std::sqrt(std::max(result.covariance(kTimeOffsets + k, kTimeOffsets + k), 0.0)));
  }

  result.cm.covariance_m2 = ObservableCmCovariance(result.covariance, result.cm);
  const Eigen::Matrix3d white_cm = ObservableCmCovariance(result.white_noise_covariance, result.cm);
  for (int i = 0; i < 3; ++i) {
    result.variance_factor_cm[i] =
        white_cm(i, i) > 0 ? result.cm.covariance_m2(i, i) / white_cm(i, i) : 1.0;
  }
  for (const Eigen::Vector3d& u : result.cm.unobservable_body) {
    const Eigen::Vector3d axis_world = fitted.WorldFromBodyAt(t0_s) * u;
    result.warnings.push_back(fmt::format(
        "The CM is not determined along the body direction [{:.3f}, {:.3f}, {:.3f}]: the body "
        "spun about an axis fixed in space (world direction [{:.3f}, {:.3f}, {:.3f}]), so a "
        "shift of the CM along that axis moves every marker by the same constant offset, "
        "which the CM path absorbs. That component is reported as null; the others are those "
        "of the point of that line nearest the body origin (if the CM lies a distance s from "
        "it along the line, they shift by s times the small uncertainty of the axis's "
        "direction). A throw that spins the body about another axis, or one that tumbles "
        "it, determines the missing component.",
        u.x(), u.y(), u.z(), axis_world.x(), axis_world.y(), axis_world.z()));
  }
  if (!cameras.front().camera_from_world) {
    result.warnings.push_back(
        "The camera file has no world_to_camera: positions, velocities and the spin are in the "
        "camera frame (x right, y down, z along the optical axis), gravity's direction in that "
        "frame was estimated from the flight (gravity.direction_world), and the launch angle is "
        "measured from the plane normal to it.");
  }
  if (!result.converged) {
    result.warnings.push_back("The fit did not converge: " + chosen.summary.message);
  }
  if (result.outliers > 0) {
    result.warnings.push_back(fmt::format(
        "{} of {} sightings ({:.1f} %) lay more than {:.1f} robust standard deviations from "
        "the model and were left out as outliers.",
        result.outliers, result.observations, 100.0 * result.outliers / result.observations,
        options.outlier_threshold_sigma));
  }
  result.solve_seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return result;
}

}  // namespace tumbletrace
