#include "tumbletrace/fit/initialise.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <Eigen/Geometry>
#include <algorithm>
#include <limits>
#include <opencv2/calib3d.hpp>
#include <opencv2/core/eigen.hpp>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/fit/rotation_math.hpp"
#include "tumbletrace/model/camera_opencv.hpp"

namespace tumbletrace {
namespace {

double Median(std::vector<double> v) {
  const auto mid = v.begin() + v.size() / 2;
  std::nth_element(v.begin(), mid, v.end());
  return *mid;
}

}  // namespace

namespace {

struct PnpSolution {
  cv::Mat rvec, tvec;  // camera from body
  double sum_sq_px2 = std::numeric_limits<double>::infinity();
};

// Candidates from two closed-form solvers and from a neighbouring frame's pose, each
// refined by Levenberg-Marquardt; the one that reprojects best wins. A near-planar layout
// gives the solvers a second, wrong minimum close in reprojection error; a neighbour's
// pose is usually in the right basin.
PnpSolution SolvePnp(const std::vector<cv::Point3d>& object, const std::vector<cv::Point2d>& image,
                     const cv::Mat& k, const cv::Mat& d, const PnpSolution* neighbour) {
  std::vector<std::pair<cv::Mat, cv::Mat>> candidates;
  for (const int method : {cv::SOLVEPNP_SQPNP, cv::SOLVEPNP_EPNP}) {
    cv::Mat rvec, tvec;
    try {
      if (cv::solvePnP(object, image, k, d, rvec, tvec, false, method)) {
        candidates.emplace_back(rvec, tvec);
      }
    } catch (const cv::Exception&) {
      // a configuration this solver cannot take; the others may still serve
    }
  }
  if (neighbour != nullptr && !neighbour->rvec.empty()) {
    candidates.emplace_back(neighbour->rvec.clone(), neighbour->tvec.clone());
  }
  PnpSolution best;
  for (auto& [r, t] : candidates) {
    cv::solvePnPRefineLM(object, image, k, d, r, t);
    std::vector<cv::Point2d> reprojected;
    cv::projectPoints(object, r, t, k, d, reprojected);
    double sum_sq = 0.0;
    for (size_t i = 0; i < image.size(); ++i) {
      const cv::Point2d e = reprojected[i] - image[i];
      sum_sq += e.dot(e);
    }
    if (sum_sq < best.sum_sq_px2) best = {r, t, sum_sq};
  }
  return best;
}

}  // namespace

bool CanPoseFrame(const FrameSightings& frame, const Body& body, int min_markers) {
  int known = 0;
  for (const MarkerSighting& s : frame.sightings) known += body.FindMarker(s.marker_id) != nullptr;
  return known >= std::max(min_markers, 4);
}

std::vector<BodyPose> EstimateFramePoses(const std::vector<FrameSightings>& frames,
                                         const Body& body, const Camera& camera,
                                         int min_markers) {
  const cv::Mat k = OpenCvCameraMatrix(camera.intrinsics);
  const cv::Mat d = OpenCvDistortion(camera.intrinsics);
  const RigidTransform world_from_camera =
      camera.camera_from_world.value_or(RigidTransform{}).Inverse();
  struct Correspondences {
    const FrameSightings* frame;
    std::vector<cv::Point3d> object;
    std::vector<cv::Point2d> image;
  };
  std::vector<Correspondences> usable;
  for (const FrameSightings& f : frames) {
    if (!CanPoseFrame(f, body, min_markers)) continue;
    Correspondences c{&f, {}, {}};
    for (const MarkerSighting& s : f.sightings) {
      const Marker* m = body.FindMarker(s.marker_id);
      if (m == nullptr) continue;
      c.object.emplace_back(m->at_body_m.x(), m->at_body_m.y(), m->at_body_m.z());
      c.image.emplace_back(s.pixel.x(), s.pixel.y());
    }
    usable.push_back(std::move(c));
  }
  // A forward pass seeded by the previous frame, then a backward pass seeded by the next,
  // so that the first frames also get a neighbour's help.
  std::vector<PnpSolution> solutions(usable.size());
  for (size_t i = 0; i < usable.size(); ++i) {
    solutions[i] = SolvePnp(usable[i].object, usable[i].image, k, d, i > 0 ? &solutions[i - 1] : nullptr);
  }
  for (size_t i = usable.size(); i-- > 1;) {
    PnpSolution again = SolvePnp(usable[i - 1].object, usable[i - 1].image, k, d, &solutions[i]);
    if (again.sum_sq_px2 < solutions[i - 1].sum_sq_px2) solutions[i - 1] = again;
  }
  std::vector<BodyPose> poses;
  for (size_t i = 0; i < usable.size(); ++i) {
    const PnpSolution& sol = solutions[i];
    if (sol.rvec.empty()) continue;
    cv::Mat rmat;
    cv::Rodrigues(sol.rvec, rmat);
    Eigen::Matrix3d camera_from_body;
    Eigen::Vector3d t_camera_m;
    cv::cv2eigen(rmat, camera_from_body);
    cv::cv2eigen(sol.tvec, t_camera_m);
    BodyPose pose;
    pose.frame = usable[i].frame->frame;
    pose.time_s = usable[i].frame->time_s;
    pose.world_from_body = world_from_camera.rotation * camera_from_body;
    pose.origin_world_m = world_from_camera.Apply(t_camera_m);
    pose.rms_px = std::sqrt(sol.sum_sq_px2 / usable[i].image.size());
    poses.push_back(pose);
  }
  return poses;
}

FlightParameters InitialiseFlight(const std::vector<BodyPose>& poses, double t0_s,
                                  const FitOptions& options) {
  if (poses.size() < 3) {
    throw DataError(fmt::format(
        "only {} frames show at least {} identified markers; the initial poses need 3 or "
        "more such frames",
        poses.size(), std::max(options.min_markers_per_frame, 4)));
  }
  FlightParameters p;
  p.t0_s = t0_s;

  // Angular velocity in the world: the component-wise median of the rotation vectors
  // between consecutive posed frames, per second. Robust to the odd flipped PnP pose.
  std::vector<double> wx, wy, wz;
  for (size_t k = 1; k < poses.size(); ++k) {
    const double dt = poses[k].time_s - poses[k - 1].time_s;
    if (dt <= 0) continue;
    const Eigen::Vector3d w = LogRotation(poses[k].world_from_body *
                                          poses[k - 1].world_from_body.transpose()) / dt;
    wx.push_back(w.x());
    wy.push_back(w.y());
    wz.push_back(w.z());
  }
  if (wx.empty()) throw DataError("the posed frames do not advance in time");
  p.omega_world_radps = {Median(wx), Median(wy), Median(wz)};

  // R0: the mean of the poses carried back to t0; then again without the poses more
  // than 10 degrees from that mean (ambiguous PnP solutions of near-planar layouts).
  std::vector<Eigen::Quaterniond> carried;
  for (const BodyPose& pose : poses) {
    carried.emplace_back(ExpRotation(-p.omega_world_radps * (pose.time_s - t0_s)) *
                         pose.world_from_body);
  }
  Eigen::Quaterniond q0 = MeanRotation(carried);
  std::vector<Eigen::Quaterniond> kept;
  for (const auto& q : carried) {
    if (q.angularDistance(q0) < 10.0 * M_PI / 180.0) kept.push_back(q);
  }
  if (kept.size() >= 3) q0 = MeanRotation(kept);

  // Refine w and R0 together over the whole window (differences of neighbouring frames
  // are noisy: the noise of two poses over one frame interval): the residual rotations
  // d_k = log(R_k (Exp(w dt_k) R0)^T) are fitted by d_k = a + b dt_k, then w += b and
  // R0 <- Exp(a) R0 (Gauss-Newton on SO(3), first order in the residual). Poses more than
  // 10 degrees off are left out.
  for (int iteration = 0; iteration < 4; ++iteration) {
    Eigen::Matrix2d ata = Eigen::Matrix2d::Zero();
    Eigen::Matrix<double, 2, 3> atb = Eigen::Matrix<double, 2, 3>::Zero();
    for (const BodyPose& pose : poses) {
      const double dt = pose.time_s - t0_s;
      const Eigen::Matrix3d model = ExpRotation(p.omega_world_radps * dt) * q0.toRotationMatrix();
      const Eigen::Vector3d d = LogRotation(pose.world_from_body * model.transpose());
      if (d.norm() > 10.0 * M_PI / 180.0) continue;
      const Eigen::Vector2d row(1.0, dt);
      ata += row * row.transpose();
      atb += row * d.transpose();
    }
    if (ata.determinant() <= 0) break;
    const Eigen::Matrix<double, 2, 3> ab = ata.ldlt().solve(atb);
    q0 = Eigen::Quaterniond(ExpRotation(ab.row(0).transpose()) * q0.toRotationMatrix());
    p.omega_world_radps += ab.row(1).transpose();
  }
  p.q0_wxyz = {q0.w(), q0.x(), q0.y(), q0.z()};

  std::vector<Eigen::Matrix3d> rotations;
  for (const BodyPose& pose : poses) {
    rotations.push_back(ExpRotation(p.omega_world_radps * (pose.time_s - t0_s)) *
                        q0.toRotationMatrix());
  }
  SolveTranslationAndCm(poses, rotations, options, &p);
  return p;
}

void SolveTranslationAndCm(const std::vector<BodyPose>& poses,
                           const std::vector<Eigen::Matrix3d>& world_from_body,
                           const FitOptions& options, FlightParameters* p) {
  // Closed form: p_k = r0 + v0 dt + g dt^2/2 - R(t_k) c, rows per frame and axis.
  // g is solved for when it is estimated; when only its direction is, the solved vector is
  // scaled to the given magnitude afterwards (the start of the fit on the sphere).
  const bool estimate_g = options.gravity_mode != GravityMode::kFixed;
  const int n_unknowns = estimate_g ? 12 : 9;
  const int n_rows = 3 * static_cast<int>(poses.size());
  Eigen::MatrixXd a = Eigen::MatrixXd::Zero(n_rows + 3, n_unknowns);
  Eigen::VectorXd b = Eigen::VectorXd::Zero(n_rows + 3);
  for (size_t k = 0; k < poses.size(); ++k) {
    const double dt = poses[k].time_s - p->t0_s;
    const Eigen::Matrix3d& r_k = world_from_body[k];
    const int row = 3 * static_cast<int>(k);
    a.block<3, 3>(row, 0).setIdentity();
    a.block<3, 3>(row, 3) = dt * Eigen::Matrix3d::Identity();
    a.block<3, 3>(row, 6) = -r_k;
    b.segment<3>(row) = poses[k].origin_world_m;
    if (estimate_g) {
      a.block<3, 3>(row, 9) = 0.5 * dt * dt * Eigen::Matrix3d::Identity();
    } else {
      b.segment<3>(row) -= 0.5 * dt * dt * options.gravity_world_mps2;
    }
  }
  // A whisper of ridge on c (1e-10 of the mean diagonal) picks the smallest c along
  // directions the data leave undetermined (a spin about an axis fixed in space) without
  // moving the determined ones.
  const double ridge = std::sqrt(1e-10 * (a.topRows(n_rows).colwise().squaredNorm().sum() /
                                          n_unknowns));
  a.block<3, 3>(n_rows, 6) = ridge * Eigen::Matrix3d::Identity();
  const Eigen::VectorXd x = a.colPivHouseholderQr().solve(b);
  p->r0_world_m = x.segment<3>(0);
  p->v0_world_mps = x.segment<3>(3);
  p->cm_body_m = x.segment<3>(6);
  p->g_world_mps2 = estimate_g ? Eigen::Vector3d(x.segment<3>(9)) : options.gravity_world_mps2;
  if (options.gravity_mode == GravityMode::kDirection) {
    p->g_world_mps2 = p->g_world_mps2.norm() > 0
                          ? Eigen::Vector3d(p->g_world_mps2.normalized() * options.gravity_world_mps2.norm())
                          : options.gravity_world_mps2;
  }
}

}  // namespace tumbletrace
