// The start of the torque-free models (fit/initialise.hpp, InitialiseTorqueFree).
#include <ceres/ceres.h>
#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <memory>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/fit/initialise.hpp"
#include "tumbletrace/fit/moment_bounds.hpp"
#include "tumbletrace/fit/rotation_math.hpp"
#include "tumbletrace/fit/symmetric_axes_manifold.hpp"
#include "tumbletrace/fit/torque_free_rotation.hpp"
#include "tumbletrace/model/mass_properties.hpp"

namespace tumbletrace {
namespace {

Eigen::Vector4d Wxyz(const Eigen::Quaterniond& q) { return {q.w(), q.x(), q.y(), q.z()}; }

// Principal frame and [s, d] for moments given along the columns of `axes`, relabelled so
// that `unique` (an index 0..2) becomes principal axis 3 (the symmetry axis of a
// symmetric top; any axis for a free top), normalised by its moment.
void SetPrincipal(const Eigen::Matrix3d& axes, const Eigen::Vector3d& moments, int unique,
                  FlightParameters* p) {
  const int a = (unique + 1) % 3, b = (unique + 2) % 3;  // cyclic: keeps the frame right-handed
  Eigen::Matrix3d frame;
  frame.col(0) = axes.col(a);
  frame.col(1) = axes.col(b);
  frame.col(2) = axes.col(unique);
  if (frame.determinant() < 0) frame.col(0) = -frame.col(0);
  p->body_from_principal_wxyz = Wxyz(Eigen::Quaterniond(frame).normalized());
  const double m1 = moments[a] / moments[unique], m2 = moments[b] / moments[unique];
  p->moments_sd = {std::max(0.5 * (m1 + m2), kMomentSumMin),
                   std::clamp(0.5 * (m2 - m1), -kMomentDifferenceMax, kMomentDifferenceMax)};
}

// The axis whose moment differs most from the other two's (the symmetry axis when two
// are nearly equal), for ascending moments: 0 or 2.
int MostDistinctAxis(const Eigen::Vector3d& ascending) {
  return (ascending[1] - ascending[0] < ascending[2] - ascending[1]) ? 2 : 0;
}

// The inertia tensor J (up to scale) and the world angular momentum L from the conditions
// R_k J w_k = L of the turns between neighbouring poses (conservation of angular momentum):
// the null vector of the stacked system, with the singular values and each pair's residual.
struct InertiaFromTurns {
  Eigen::VectorXd null_vector;      // J11 J22 J33 J12 J13 J23 L1 L2 L3
  Eigen::VectorXd singular_values;  // of the column-scaled system, descending
  std::vector<double> pair_residuals;
};

InertiaFromTurns SolveInertiaFromTurns(const std::vector<Eigen::Matrix3d>& mid_rotation,
                                       const std::vector<Eigen::Vector3d>& mid_omega_body) {
  Eigen::MatrixXd a(3 * mid_rotation.size(), 9);
  for (size_t k = 0; k < mid_rotation.size(); ++k) {
    const Eigen::Vector3d& w = mid_omega_body[k];
    Eigen::Matrix<double, 3, 6> jw;  // J w as a linear map of J's six entries
    jw << w.x(), 0, 0, w.y(), w.z(), 0,
          0, w.y(), 0, w.x(), 0, w.z(),
          0, 0, w.z(), 0, w.x(), w.y();
    a.block<3, 6>(3 * k, 0) = mid_rotation[k] * jw;
    a.block<3, 3>(3 * k, 6) = -Eigen::Matrix3d::Identity();
  }
  // Columns scaled alike so that the null vector does not favour one unknown.
  const Eigen::VectorXd scale = a.colwise().norm().cwiseMax(1e-300);
  const Eigen::MatrixXd as = a * scale.cwiseInverse().asDiagonal();
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(as, Eigen::ComputeFullV);
  InertiaFromTurns out;
  out.singular_values = svd.singularValues();
  const Eigen::VectorXd v = svd.matrixV().col(8);
  out.null_vector = v.cwiseQuotient(scale);
  for (size_t k = 0; k < mid_rotation.size(); ++k) {
    out.pair_residuals.push_back((as.middleRows(3 * k, 3) * v).norm());
  }
  return out;
}

// The orientation and angular velocity at t0 from the pose nearest t0 and the momentum:
// w = R J^-1 R^T L (L = R J w_body, world; J and L up to one common scale), and the pose
// carried to t0 by that angular velocity. A tumbling body's angular velocity in the world
// changes over the flight, so the constant-spin start (a median over the whole flight) can
// be far from it at t0; this start is local to t0.
void StartFromMomentum(const std::vector<BodyPose>& poses, const Eigen::Matrix3d& j,
                       const Eigen::Vector3d& l, FlightParameters* p) {
  const BodyPose* nearest = &poses.front();
  for (const BodyPose& pose : poses) {
    if (std::abs(pose.time_s - p->t0_s) < std::abs(nearest->time_s - p->t0_s)) nearest = &pose;
  }
  const Eigen::Matrix3d& r = nearest->world_from_body;
  const Eigen::Vector3d w = r * j.inverse() * r.transpose() * l;
  p->omega_world_radps = w;
  p->q0_wxyz = Wxyz(Eigen::Quaterniond(ExpRotation(w * (p->t0_s - nearest->time_s)) * r).normalized());
}

// Orientation of the model at one pose against the pose's: the rotation vector of
// q_pose* (x) q_model (small-angle form 2 vec, the sign chosen for w >= 0), radians.
class PoseOrientationCost {
 public:
  PoseOrientationCost(const Eigen::Quaterniond& pose, std::shared_ptr<TorqueFreeTrajectory> t,
                      int sample)
      : pose_(pose), trajectory_(std::move(t)), sample_(sample) {}
  template <typename T>
  bool operator()(const T* q0, const T* w, const T* principal, const T* sd, T* residual) const {
    T q[4];
    TorqueFreeOrientation(q0, w, principal, sd, T(0.0), *trajectory_, sample_, q);
    const T pose_inverse[4] = {T(pose_.w()), T(-pose_.x()), T(-pose_.y()), T(-pose_.z())};
    T e[4];
    ceres::QuaternionProduct(pose_inverse, q, e);
    const T sign = ValueOf(e[0]) < 0 ? T(-2.0) : T(2.0);
    for (int i = 0; i < 3; ++i) residual[i] = sign * e[i + 1];
    return true;
  }

 private:
  Eigen::Quaterniond pose_;
  std::shared_ptr<TorqueFreeTrajectory> trajectory_;
  int sample_;
};

// Fits q0, w and (unless held) the principal frame and moments to the poses within
// |t - t0| <= half_width_s.
void FitRotationToPoses(const std::vector<BodyPose>& poses, double half_width_s,
                        RotationModel model, bool held, const FitOptions& options,
                        FlightParameters* p) {
  std::vector<const BodyPose*> used;
  std::vector<double> taus;
  for (const BodyPose& pose : poses) {
    if (std::abs(pose.time_s - p->t0_s) <= half_width_s) {
      used.push_back(&pose);
      taus.push_back(pose.time_s - p->t0_s);
    }
  }
  if (used.size() < 6) return;
  auto trajectory = std::make_shared<TorqueFreeTrajectory>(taus, options.max_step_angle_rad);
  double q0[4], w[3], principal[4], sd[2];
  std::copy_n(p->q0_wxyz.data(), 4, q0);
  std::copy_n(p->omega_world_radps.data(), 3, w);
  std::copy_n(p->body_from_principal_wxyz.data(), 4, principal);
  std::copy_n(p->moments_sd.data(), 2, sd);
  ceres::Problem::Options problem_options;
  problem_options.manifold_ownership = ceres::TAKE_OWNERSHIP;
  ceres::Problem problem(problem_options);
  for (size_t i = 0; i < used.size(); ++i) {
    problem.AddResidualBlock(
        new ceres::AutoDiffCostFunction<PoseOrientationCost, 3, 4, 3, 4, 2>(
            new PoseOrientationCost(Eigen::Quaterniond(used[i]->world_from_body), trajectory,
                                    static_cast<int>(i))),
        new ceres::CauchyLoss(0.05), q0, w, principal, sd);
  }
  problem.SetManifold(q0, new ceres::QuaternionManifold);
  if (held) {
    problem.SetParameterBlockConstant(principal);
    problem.SetParameterBlockConstant(sd);
  } else {
    if (model == RotationModel::kSymmetricTop) {
      problem.SetManifold(principal, new SymmetricAxesManifold);
      problem.SetManifold(sd, new ceres::SubsetManifold(2, {1}));
    } else {
      problem.SetManifold(principal, new ceres::QuaternionManifold);
    }
    BoundMoments(&problem, sd, model == RotationModel::kSymmetricTop);
  }
  ceres::Solver::Options solver;
  solver.linear_solver_type = ceres::DENSE_QR;
  solver.max_num_iterations = 100;
  solver.logging_type = ceres::SILENT;
  ceres::Solver::Summary summary;
  ceres::Solve(solver, &problem, &summary);
  p->q0_wxyz = Eigen::Vector4d(q0).normalized();
  p->omega_world_radps = Eigen::Vector3d(w);
  p->body_from_principal_wxyz = Eigen::Vector4d(principal).normalized();
  p->moments_sd = Eigen::Vector2d(sd);
}

}  // namespace

FlightParameters SymmetricStart(const FlightParameters& free_top) {
  FlightParameters p = free_top;
  p.rotation_model = RotationModel::kSymmetricTop;
  const Eigen::Matrix3d axes = free_top.BodyFromPrincipal();
  const PrincipalAxes principal =
      Principal(axes * free_top.Moments().asDiagonal() * axes.transpose());
  SetPrincipal(principal.axes_body, principal.moments_kgm2,
               MostDistinctAxis(principal.moments_kgm2), &p);
  p.moments_sd[1] = 0.0;
  return p;
}

FlightParameters SteadySpinStart(const FlightParameters& spin, RotationModel model,
                                 const FitOptions& options) {
  FlightParameters p = spin;
  p.rotation_model = model;
  p.max_step_angle_rad = options.max_step_angle_rad;
  const Eigen::Matrix3d r0 =
      Eigen::Quaterniond(spin.q0_wxyz[0], spin.q0_wxyz[1], spin.q0_wxyz[2], spin.q0_wxyz[3])
          .normalized()
          .toRotationMatrix();
  const Eigen::Vector3d axis_body = (r0.transpose() * spin.omega_world_radps).normalized();
  const Eigen::Quaterniond frame = Eigen::Quaterniond::FromTwoVectors(Eigen::Vector3d::UnitZ(), axis_body);
  p.body_from_principal_wxyz = Wxyz(frame);
  p.moments_sd = {0.8, model == RotationModel::kSymmetricTop ? 0.0 : 0.1};
  return p;
}

FlightParameters InitialiseTorqueFree(const std::vector<BodyPose>& poses,
                                      const FlightParameters& spin, RotationModel model,
                                      const FitOptions& options) {
  if (model == RotationModel::kConstantSpin) return spin;
  FlightParameters p = spin;
  p.rotation_model = model;
  p.max_step_angle_rad = options.max_step_angle_rad;

  if (options.held_inertia) {
    const HeldInertia& held = *options.held_inertia;
    const PrincipalAxes principal =
        Principal(held.axes_body * held.moments.asDiagonal() * held.axes_body.transpose());
    SetPrincipal(principal.axes_body, principal.moments_kgm2,
                 model == RotationModel::kSymmetricTop ? MostDistinctAxis(principal.moments_kgm2)
                                                       : 2,
                 &p);
  } else {
    // 1. J and L from R_k J w_k = L, w_k the body angular velocity between neighbours.
    std::vector<Eigen::Matrix3d> mid_rotation;
    std::vector<Eigen::Vector3d> mid_omega_body;
    for (size_t k = 1; k < poses.size(); ++k) {
      const double dt = poses[k].time_s - poses[k - 1].time_s;
      if (dt <= 0) continue;
      const Eigen::Vector3d turn =
          LogRotation(poses[k - 1].world_from_body.transpose() * poses[k].world_from_body);
      if (turn.norm() > 1.0) continue;  // too far apart to take as one steady turn
      mid_rotation.push_back(poses[k - 1].world_from_body * ExpRotation(0.5 * turn));
      mid_omega_body.push_back(turn / dt);
    }
    bool determined = false;
    if (mid_rotation.size() >= 6) {
      InertiaFromTurns estimate = SolveInertiaFromTurns(mid_rotation, mid_omega_body);
      // Again without the pairs far off that solution (a PnP pose flipped to the mirror
      // solution of a flat layout gives two such pairs): beyond 5 times the median
      // residual (common practice for a robust cut).
      std::vector<double> sorted = estimate.pair_residuals;
      std::nth_element(sorted.begin(), sorted.begin() + sorted.size() / 2, sorted.end());
      const double cut = 5.0 * sorted[sorted.size() / 2];
      std::vector<Eigen::Matrix3d> kept_rotation;
      std::vector<Eigen::Vector3d> kept_omega;
      for (size_t k = 0; k < mid_rotation.size(); ++k) {
        if (estimate.pair_residuals[k] > cut) continue;
        kept_rotation.push_back(mid_rotation[k]);
        kept_omega.push_back(mid_omega_body[k]);
      }
      if (kept_rotation.size() >= 6 && kept_rotation.size() < mid_rotation.size()) {
        estimate = SolveInertiaFromTurns(kept_rotation, kept_omega);
      }
      const Eigen::VectorXd& sv = estimate.singular_values;
      const Eigen::VectorXd& x = estimate.null_vector;
      // Determined when the null space is one-dimensional by a clear margin.
      if (sv[7] > 10.0 * sv[8]) {
        Eigen::Matrix3d j;
        j << x[0], x[3], x[4], x[3], x[1], x[5], x[4], x[5], x[2];
        if (j.trace() < 0) j = -j;
        const PrincipalAxes principal = Principal(j);
        if (principal.moments_kgm2[0] > 0 &&
            principal.moments_kgm2[0] + principal.moments_kgm2[1] >= 0.98 * principal.moments_kgm2[2]) {
          SetPrincipal(principal.axes_body, principal.moments_kgm2,
                       model == RotationModel::kSymmetricTop ? MostDistinctAxis(principal.moments_kgm2)
                                                             : 2,
                       &p);
          if (model == RotationModel::kSymmetricTop) p.moments_sd[1] = 0.0;
          const Eigen::Vector3d l = (x[0] + x[1] + x[2] < 0 ? -1.0 : 1.0) * x.tail<3>();
          StartFromMomentum(poses, j, l, &p);
          determined = true;
        }
      }
    }
    if (!determined) {
      // A spin about a principal axis along the constant-spin axis: the same motion.
      const FlightParameters steady = SteadySpinStart(spin, model, options);
      p.body_from_principal_wxyz = steady.body_from_principal_wxyz;
      p.moments_sd = steady.moments_sd;
    }
  }

  // 2. The rotation fitted to the poses over growing windows.
  double half_width_s = 0.0;
  for (const BodyPose& pose : poses) half_width_s = std::max(half_width_s, std::abs(pose.time_s - p.t0_s));
  for (const double fraction : {0.125, 0.25, 0.5, 1.0}) {
    FitRotationToPoses(poses, fraction * half_width_s * 1.0001, model,
                       options.held_inertia.has_value(), options, &p);
  }

  // 3. Translation and CM with that rotation.
  std::vector<double> times;
  for (const BodyPose& pose : poses) times.push_back(pose.time_s);
  std::vector<Eigen::Matrix3d> rotations;
  p.RotationAt(times, &rotations, nullptr);
  SolveTranslationAndCm(poses, rotations, options, &p);
  return p;
}

}  // namespace tumbletrace
