#include "tumbletrace/fit/free_flight_fit.hpp"

#include <ceres/ceres.h>
#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <map>
#include <memory>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/fit/initialise.hpp"
#include "tumbletrace/fit/reprojection_cost.hpp"

namespace tumbletrace {

std::string FitOptions::Validate() const {
  if (!(robust_loss_scale_px > 0)) return "robust_loss_scale_px must be positive (px)";
  if (!(outlier_threshold_sigma > 1)) return "outlier_threshold_sigma must exceed 1";
  if (min_markers_per_frame < 3) return "min_markers_per_frame must be at least 3";
  if (max_iterations < 1) return "max_iterations must be at least 1";
  if (initial_pose_frames < 3) return "initial_pose_frames must be at least 3";
  if (!(gravity_world_mps2.norm() > 0)) return "gravity must be a non-zero vector (m/s^2)";
  if (first_frame && last_frame && *first_frame > *last_frame) {
    return "the first frame of the window comes after its last frame";
  }
  return "";
}

namespace {

// The parameter blocks Ceres works on, in the order of the cost function.
struct ParameterBlocks {
  explicit ParameterBlocks(const FlightParameters& p) {
    std::copy_n(p.r0_world_m.data(), 3, r0);
    std::copy_n(p.v0_world_mps.data(), 3, v0);
    std::copy_n(p.g_world_mps2.data(), 3, g);
    std::copy_n(p.q0_wxyz.data(), 4, q0);
    std::copy_n(p.omega_world_radps.data(), 3, w);
    std::copy_n(p.cm_body_m.data(), 3, c);
  }
  FlightParameters ToParameters(double t0_s) const {
    FlightParameters p;
    p.t0_s = t0_s;
    p.r0_world_m = Eigen::Vector3d(r0);
    p.v0_world_mps = Eigen::Vector3d(v0);
    p.g_world_mps2 = Eigen::Vector3d(g);
    p.q0_wxyz = Eigen::Vector4d(q0).normalized();
    p.omega_world_radps = Eigen::Vector3d(w);
    p.cm_body_m = Eigen::Vector3d(c);
    return p;
  }
  std::vector<double*> All() { return {r0, v0, g, q0, w, c}; }

  double r0[3], v0[3], g[3], q0[4], w[3], c[3];
};

struct Sighting {
  int camera;
  int frame;
  double time_s;
  int marker_id;
  Eigen::Vector2d pixel;
  Eigen::Vector3d marker_body_m;
};

// Camera k's clock offset: world time = its frame time + offset.
double OffsetOf(const FitOptions& options, int camera) {
  return camera < static_cast<int>(options.time_offsets_s.size()) ? options.time_offsets_s[camera]
                                                                   : 0.0;
}

// Builds and solves the problem over the sightings flagged in `use`. The gauge: the world
// frame is fixed by the camera's pose and gravity; the body frame by the marker layout.
// Nothing else is fixed, so a spin about an axis fixed in space leaves one direction of c
// (with r0) free: Levenberg-Marquardt's damping keeps it at its initial value, and the
// covariance step below reports it as unobservable instead of giving it a number.
std::unique_ptr<ceres::Problem> BuildProblem(const std::vector<Sighting>& sightings,
                                             const std::vector<bool>& use, double t0_s,
                                             const std::vector<Camera>& cameras,
                                             const FitOptions& options, bool robust,
                                             ParameterBlocks* blocks) {
  ceres::Problem::Options problem_options;
  problem_options.manifold_ownership = ceres::TAKE_OWNERSHIP;
  auto problem = std::make_unique<ceres::Problem>(problem_options);
  for (size_t i = 0; i < sightings.size(); ++i) {
    if (!use[i]) continue;
    const Sighting& s = sightings[i];
    const Camera& camera = cameras[s.camera];
    const double dt_s = s.time_s + OffsetOf(options, s.camera) - t0_s;
    ceres::LossFunction* loss =
        robust ? new ceres::HuberLoss(options.robust_loss_scale_px) : nullptr;
    problem->AddResidualBlock(
        MarkerReprojectionCost<>::Create(s.pixel, s.marker_body_m, dt_s, camera.intrinsics,
                                         *camera.camera_from_world),
        loss, blocks->r0, blocks->v0, blocks->g, blocks->q0, blocks->w, blocks->c);
  }
  problem->SetManifold(blocks->q0, new ceres::QuaternionManifold);
  if (options.gravity_mode == GravityMode::kFixed) problem->SetParameterBlockConstant(blocks->g);
  return problem;
}

ceres::Solver::Summary Solve(ceres::Problem* problem, const FitOptions& options) {
  ceres::Solver::Options solver;
  solver.linear_solver_type = ceres::DENSE_QR;
  solver.max_num_iterations = options.max_iterations;
  // Ceres' default tolerances (1e-6 on the cost) stop far from the optimum of a problem
  // this well conditioned; these stop at the limit of double precision instead.
  solver.function_tolerance = 1e-15;
  solver.gradient_tolerance = 1e-15;
  solver.parameter_tolerance = 1e-14;
  solver.num_threads = 1;
  solver.logging_type = ceres::SILENT;
  ceres::Solver::Summary summary;
  ceres::Solve(solver, problem, &summary);
  return summary;
}

std::vector<Eigen::Vector2d> Residuals(const std::vector<Sighting>& sightings,
                                       const FlightParameters& p,
                                       const std::vector<Camera>& cameras,
                                       const FitOptions& options) {
  std::vector<Eigen::Vector2d> r(sightings.size());
  for (size_t i = 0; i < sightings.size(); ++i) {
    const Sighting& s = sightings[i];
    Eigen::Vector2d predicted;
    if (p.PredictPixel(cameras[s.camera], s.marker_body_m,
                       s.time_s + OffsetOf(options, s.camera), &predicted)) {
      r[i] = predicted - sightings[i].pixel;
    } else {
      r[i] = Eigen::Vector2d::Constant(std::numeric_limits<double>::infinity());
    }
  }
  return r;
}

// Robust per-coordinate noise: 1.4826 x the median absolute residual component (the
// normal-consistent MAD, common practice).
double RobustSigma(const std::vector<Eigen::Vector2d>& r) {
  std::vector<double> a;
  a.reserve(2 * r.size());
  for (const auto& e : r) {
    a.push_back(std::abs(e.x()));
    a.push_back(std::abs(e.y()));
  }
  const auto mid = a.begin() + a.size() / 2;
  std::nth_element(a.begin(), mid, a.end());
  return 1.4826 * *mid;
}

// Dense tangent-space Jacobian of all residuals, columns in CovarianceBlock order (the
// columns of gravity are zero when it is held fixed).
Eigen::MatrixXd DenseJacobian(ceres::Problem* problem, ParameterBlocks* blocks,
                              bool gravity_fixed) {
  ceres::Problem::EvaluateOptions eval;
  std::vector<int> column_of_block;
  const std::vector<double*> all = blocks->All();
  const int offsets[] = {kR0, kV0, kG, kQ0, kOmega, kCm};
  for (size_t b = 0; b < all.size(); ++b) {
    if (gravity_fixed && all[b] == blocks->g) continue;
    eval.parameter_blocks.push_back(all[b]);
    for (int k = 0; k < 3; ++k) column_of_block.push_back(offsets[b] + k);
  }
  ceres::CRSMatrix crs;
  problem->Evaluate(eval, nullptr, nullptr, nullptr, &crs);
  Eigen::MatrixXd j = Eigen::MatrixXd::Zero(crs.num_rows, kTangentSize);
  for (int row = 0; row < crs.num_rows; ++row) {
    for (int k = crs.rows[row]; k < crs.rows[row + 1]; ++k) {
      j(row, column_of_block.at(crs.cols[k])) = crs.values[k];
    }
  }
  return j;
}

// The information of c with every other parameter marginalised (Schur complement of the
// normal matrix), its eigen-structure, and the unobservable directions.
CmObservability AnalyseCm(const Eigen::MatrixXd& jacobian, bool gravity_fixed, double sigma_px,
                          double layout_size_m, const FitOptions& options) {
  Eigen::MatrixXd info = jacobian.transpose() * jacobian;  // px^-2-free: J^T J
  std::vector<int> others;
  for (int i = 0; i < kCm; ++i) {
    if (gravity_fixed && i >= kG && i < kG + 3) continue;
    others.push_back(i);
  }
  const int n = static_cast<int>(others.size());
  Eigen::MatrixXd a_oo(n, n), a_oc(n, 3);
  for (int i = 0; i < n; ++i) {
    for (int j = 0; j < n; ++j) a_oo(i, j) = info(others[i], others[j]);
    a_oc.row(i) = info.block(others[i], kCm, 1, 3);
  }
  const Eigen::Matrix3d a_cc = info.block<3, 3>(kCm, kCm);
  const Eigen::Matrix3d schur =
      a_cc - a_oc.transpose() * a_oo.completeOrthogonalDecomposition().solve(a_oc);
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

}  // namespace

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
  for (size_t k = 0; k < cameras.size(); ++k) {
    if (!cameras[k].camera_from_world) {
      throw InputError(fmt::format("camera {} has no world_to_camera pose; the fit needs it", k));
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

  // The start needs poses from a few dozen frames per camera spread over the window, not
  // all of them: PnP dominates the cost of the fit otherwise.
  std::vector<BodyPose> poses;
  for (size_t k = 0; k < cameras.size(); ++k) {
    std::vector<FrameSightings> of_camera;
    for (const FrameSightings& f : window) {
      if (f.camera == static_cast<int>(k)) of_camera.push_back(f);
    }
    std::vector<FrameSightings> sampled;
    const size_t stride = std::max<size_t>(1, of_camera.size() / options.initial_pose_frames);
    for (size_t i = 0; i < of_camera.size(); i += stride) {
      sampled.push_back(of_camera[i]);
      sampled.back().time_s = world_time(of_camera[i]);
    }
    for (BodyPose& pose : EstimateFramePoses(sampled, body, cameras[k],
                                             options.min_markers_per_frame)) {
      poses.push_back(pose);
    }
  }
  std::stable_sort(poses.begin(), poses.end(),
                   [](const BodyPose& a, const BodyPose& b) { return a.time_s < b.time_s; });
  FlightParameters initial = InitialiseFlight(poses, t0_s, options);

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

  // Pass 1: robust, from the closed-form start.
  ParameterBlocks blocks(initial);
  std::vector<bool> use(sightings.size(), true);
  {
    auto problem = BuildProblem(sightings, use, t0_s, cameras, options, true, &blocks);
    Solve(problem.get(), options);
  }
  // Pass 2 (and a third when the set of outliers changes): plain least squares on the
  // sightings within `outlier_threshold_sigma` robust standard deviations.
  std::unique_ptr<ceres::Problem> problem;
  ceres::Solver::Summary summary;
  for (int round = 0; round < 3; ++round) {
    const FlightParameters current = blocks.ToParameters(t0_s);
    const std::vector<Eigen::Vector2d> r = Residuals(sightings, current, cameras, options);
    std::vector<Eigen::Vector2d> inlier_r;
    for (size_t i = 0; i < r.size(); ++i) {
      if (use[i]) inlier_r.push_back(r[i]);
    }
    const double sigma = RobustSigma(round == 0 ? r : inlier_r);
    const double limit_px = options.outlier_threshold_sigma * std::max(sigma, 1e-6);
    std::vector<bool> next(sightings.size());
    for (size_t i = 0; i < r.size(); ++i) next[i] = r[i].norm() <= limit_px;
    if (round > 0 && next == use) break;
    use = next;
    problem = BuildProblem(sightings, use, t0_s, cameras, options, false, &blocks);
    summary = Solve(problem.get(), options);
  }

  const FlightParameters fitted = blocks.ToParameters(t0_s);
  result.parameters = fitted;
  result.converged = summary.termination_type == ceres::CONVERGENCE;
  result.termination = summary.message;
  result.iterations = static_cast<int>(summary.iterations.size());
  result.observations = static_cast<int>(sightings.size());
  result.outliers = static_cast<int>(std::count(use.begin(), use.end(), false));

  // Residuals and the noise estimate: s^2 = sum r^2 / (n_residuals - n_parameters).
  const std::vector<Eigen::Vector2d> r = Residuals(sightings, fitted, cameras, options);
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
  const bool gravity_fixed = options.gravity_mode == GravityMode::kFixed;
  Eigen::MatrixXd jacobian = DenseJacobian(problem.get(), &blocks, gravity_fixed);
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
      result.time_offsets_s.push_back(OffsetOf(options, static_cast<int>(k)));
      result.sigma_time_offsets_s.push_back(0.0);
    }
  }

  // Observability of the CM in the body frame.
  const double layout_size_m = std::max(LayoutSize(body), 1e-3);
  result.cm = AnalyseCm(jacobian, gravity_fixed, result.sigma_px, layout_size_m, options);
  if (!result.cm.unobservable_body.empty()) {
    // Fix the gauge at the representative of the CM line nearest the body origin, and take
    // the covariance there. The in-plane part of c is only determined perpendicular to the
    // fitted spin axis, whose direction is itself uncertain: elsewhere on the line, the
    // axis's uncertainty times the distance along it would be added to the in-plane
    // components (the Jacobian of a tilt then carries a lever of that distance).
    // x = r + R (m - c): c <- c - a u with r0 <- r0 - a R0 u changes no prediction.
    for (const Eigen::Vector3d& u : result.cm.unobservable_body) {
      FlightParameters p = blocks.ToParameters(t0_s);
      const double a = u.dot(p.cm_body_m);
      p.cm_body_m -= a * u;
      p.r0_world_m -= a * (p.WorldFromBodyAt(t0_s) * u);
      blocks = ParameterBlocks(p);
    }
    jacobian = DenseJacobian(problem.get(), &blocks, gravity_fixed);
    result.cm = AnalyseCm(jacobian, gravity_fixed, result.sigma_px, layout_size_m, options);
    result.parameters = blocks.ToParameters(t0_s);
  }
  // Covariance by Ceres: the Moore-Penrose inverse of J^T J in the tangent space, scaled
  // by s^2. The dense SVD drops exactly as many of the smallest eigenvalues as the CM has
  // unobservable directions (each is a gauge freedom of c with r0): inverting a
  // numerically zero eigenvalue instead would leak an arbitrary variance into every
  // parameter.
  ceres::Covariance::Options cov_options;
  cov_options.algorithm_type = ceres::DENSE_SVD;
  cov_options.null_space_rank = static_cast<int>(result.cm.unobservable_body.size());
  cov_options.min_reciprocal_condition_number = 1e-20;
  cov_options.num_threads = 1;
  ceres::Covariance covariance(cov_options);
  std::vector<const double*> cov_blocks = {blocks.r0, blocks.v0, blocks.q0, blocks.w, blocks.c};
  if (!gravity_fixed) cov_blocks.insert(cov_blocks.begin() + 2, blocks.g);
  std::vector<std::pair<const double*, const double*>> pairs;
  for (size_t i = 0; i < cov_blocks.size(); ++i) {
    for (size_t j = i; j < cov_blocks.size(); ++j) pairs.emplace_back(cov_blocks[i], cov_blocks[j]);
  }
  result.covariance.setZero();
  if (!covariance.Compute(pairs, problem.get())) {
    throw DataError("the covariance of the fit could not be computed (the problem is singular "
                    "beyond the unobservable CM directions)");
  }
  const std::map<const double*, int> offset = {{blocks.r0, kR0}, {blocks.v0, kV0},
                                               {blocks.g, kG},   {blocks.q0, kQ0},
                                               {blocks.w, kOmega}, {blocks.c, kCm}};
  const double s2 = result.sigma_px * result.sigma_px;
  for (const auto& [a, b] : pairs) {
    Eigen::Matrix<double, 3, 3, Eigen::RowMajor> block;
    covariance.GetCovarianceBlockInTangentSpace(a, b, block.data());
    result.covariance.block<3, 3>(offset.at(a), offset.at(b)) = s2 * block;
    result.covariance.block<3, 3>(offset.at(b), offset.at(a)) = s2 * block.transpose();
  }

  // The covariance of c's observable part: projected off the unobservable directions.
  Eigen::Matrix3d projector = Eigen::Matrix3d::Identity();
  for (const Eigen::Vector3d& u : result.cm.unobservable_body) projector -= u * u.transpose();
  result.cm.covariance_m2 =
      projector * result.covariance.block<3, 3>(kCm, kCm) * projector.transpose();
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
  if (!result.converged) {
    result.warnings.push_back("The fit did not converge: " + summary.message);
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
