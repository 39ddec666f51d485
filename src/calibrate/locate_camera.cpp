#include "tumbletrace/calibrate/locate_camera.hpp"

#include <ceres/jet.h>
#include <fmt/format.h>

#include <Eigen/Dense>
#include <Eigen/Geometry>
#include <cmath>
#include <limits>
#include <opencv2/calib3d.hpp>
#include <opencv2/core/eigen.hpp>
#include <sstream>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/yaml_reader.hpp"
#include "tumbletrace/model/camera_opencv.hpp"

namespace tumbletrace {
namespace {

constexpr double kDeg = 180.0 / M_PI;

RigidTransform PoseOf(const cv::Mat& rvec, const cv::Mat& tvec) {
  cv::Mat r;
  cv::Rodrigues(rvec, r);
  RigidTransform pose;
  cv::cv2eigen(r, pose.rotation);
  pose.translation_m = Eigen::Vector3d(tvec.at<double>(0), tvec.at<double>(1), tvec.at<double>(2));
  return pose;
}

// Residual of one point and its Jacobian in the pose's tangent space: with
// p = R X + t, a left rotation dtheta moves p by dtheta x (R X) and dt moves it by dt.
void ResidualAndJacobian(const RigidTransform& pose, const CameraIntrinsics& k,
                         const PointCorrespondence& point, Eigen::Vector2d* residual,
                         Eigen::Matrix<double, 2, 6>* jacobian) {
  using Jet = ceres::Jet<double, 3>;
  const Eigen::Vector3d rotated = pose.rotation * point.world_m;
  const Eigen::Vector3d p = rotated + pose.translation_m;
  Jet p_jet[3] = {Jet(p.x(), 0), Jet(p.y(), 1), Jet(p.z(), 2)};
  Jet pixel[2];
  if (!ProjectCameraPoint(k, p_jet, pixel)) {
    throw DataError("a located point lies behind the camera: the points do not fit one pose");
  }
  *residual = Eigen::Vector2d(pixel[0].a, pixel[1].a) - point.pixel;
  Eigen::Matrix<double, 2, 3> d_pixel_d_p;
  d_pixel_d_p.row(0) = pixel[0].v.transpose();
  d_pixel_d_p.row(1) = pixel[1].v.transpose();
  Eigen::Matrix3d skew;  // d p / d dtheta = -[R X]x
  skew << 0, rotated.z(), -rotated.y(), -rotated.z(), 0, rotated.x(), rotated.y(), -rotated.x(), 0;
  jacobian->leftCols<3>() = d_pixel_d_p * skew;
  jacobian->rightCols<3>() = d_pixel_d_p;
}

}  // namespace

CameraPose LocateCamera(const std::vector<PointCorrespondence>& points,
                        const CameraIntrinsics& intrinsics) {
  const int n = static_cast<int>(points.size());
  if (n < 4) {
    throw DataError(fmt::format("{} points were given; a camera pose needs at least 4 (and 6 or "
                                "more, spread over the image, for a useful uncertainty)",
                                n));
  }
  std::vector<cv::Point3d> object;
  std::vector<cv::Point2d> image;
  for (const PointCorrespondence& p : points) {
    object.emplace_back(p.world_m.x(), p.world_m.y(), p.world_m.z());
    image.emplace_back(p.pixel.x(), p.pixel.y());
  }
  const cv::Mat k = OpenCvCameraMatrix(intrinsics), d = OpenCvDistortion(intrinsics);
  // Candidates from two solvers, each refined; the one that reprojects best wins.
  double best_sum = std::numeric_limits<double>::infinity();
  cv::Mat best_r, best_t;
  for (const int method : {cv::SOLVEPNP_SQPNP, cv::SOLVEPNP_ITERATIVE}) {
    cv::Mat rvec, tvec;
    try {
      if (!cv::solvePnP(object, image, k, d, rvec, tvec, false, method)) continue;
      cv::solvePnPRefineLM(object, image, k, d, rvec, tvec,
                           cv::TermCriteria(cv::TermCriteria::EPS + cv::TermCriteria::COUNT, 100,
                                            1e-12));
    } catch (const cv::Exception&) {
      continue;  // a configuration this solver cannot take
    }
    std::vector<cv::Point2d> projected;
    cv::projectPoints(object, rvec, tvec, k, d, projected);
    double sum = 0.0;
    for (int i = 0; i < n; ++i) sum += std::pow(cv::norm(projected[i] - image[i]), 2);
    if (sum < best_sum) {
      best_sum = sum;
      best_r = rvec;
      best_t = tvec;
    }
  }
  if (best_r.empty()) throw DataError("no camera pose fits these points (PnP failed)");

  CameraPose out;
  out.points = n;
  out.camera_from_world = PoseOf(best_r, best_t);
  Eigen::Matrix<double, 6, 6> information = Eigen::Matrix<double, 6, 6>::Zero();
  double sum_sq = 0.0;
  for (const PointCorrespondence& p : points) {
    Eigen::Vector2d r;
    Eigen::Matrix<double, 2, 6> j;
    ResidualAndJacobian(out.camera_from_world, intrinsics, p, &r, &j);
    sum_sq += r.squaredNorm();
    information += j.transpose() * j;
  }
  out.rms_px = std::sqrt(sum_sq / (2.0 * n));
  const int dof = 2 * n - 6;
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix<double, 6, 6>> eig(information);
  if (dof <= 0 || !(eig.eigenvalues().minCoeff() > 1e-12 * eig.eigenvalues().maxCoeff())) {
    throw DataError("the points do not determine the camera's pose (too few, or all on one "
                    "line)");
  }
  const double s2 = sum_sq / dof;
  out.covariance = s2 * information.inverse();
  out.sigma_rotation_deg = out.covariance.diagonal().head<3>().cwiseSqrt() * kDeg;
  out.sigma_translation_mm = out.covariance.diagonal().tail<3>().cwiseSqrt() * 1e3;
  // Camera centre C = -R^T t. With R <- (1 + [a]x) R and t <- t + b, to first order
  // C <- C - R^T [t]x a - R^T b.
  const Eigen::Matrix3d& rot = out.camera_from_world.rotation;
  const Eigen::Vector3d& t = out.camera_from_world.translation_m;
  out.camera_centre_world_m = -rot.transpose() * t;
  Eigen::Matrix3d t_skew;
  t_skew << 0, -t.z(), t.y(), t.z(), 0, -t.x(), -t.y(), t.x(), 0;
  Eigen::Matrix<double, 3, 6> d_centre;
  d_centre.leftCols<3>() = -rot.transpose() * t_skew;
  d_centre.rightCols<3>() = -rot.transpose();
  const Eigen::Matrix3d cov_centre = d_centre * out.covariance * d_centre.transpose();
  out.sigma_camera_centre_mm = cov_centre.diagonal().cwiseMax(0).cwiseSqrt() * 1e3;
  // The world's z in the camera frame, u = R e_z, moves by a x u under a rotation a applied
  // on the left: its covariance is [u]x C_a [u]x^T, the angle's variance its trace.
  const Eigen::Vector3d u = rot.col(2);
  Eigen::Matrix3d u_skew;
  u_skew << 0, -u.z(), u.y(), u.z(), 0, -u.x(), -u.y(), u.x(), 0;
  const Eigen::Matrix3d cov_u = u_skew * out.covariance.topLeftCorner<3, 3>() * u_skew.transpose();
  out.sigma_vertical_deg = std::sqrt(std::max(cov_u.trace(), 0.0)) * kDeg;
  return out;
}

RigidTransform WorldFromTarget(const Eigen::Vector3d& down_in_target) {
  if (!(down_in_target.norm() > 0)) {
    throw InputError("the direction of gravity in the target frame must be a non-zero vector");
  }
  const Eigen::Vector3d up = -down_in_target.normalized();
  Eigen::Vector3d x = Eigen::Vector3d::UnitX();
  if (std::abs(x.dot(up)) > std::cos(25.0 / kDeg)) x = Eigen::Vector3d::UnitY();
  x = (x - x.dot(up) * up).normalized();
  const Eigen::Vector3d y = up.cross(x);
  RigidTransform world_from_target;
  world_from_target.rotation.row(0) = x.transpose();
  world_from_target.rotation.row(1) = y.transpose();
  world_from_target.rotation.row(2) = up.transpose();
  return world_from_target;
}

Eigen::Vector3d ParseDirection(const std::string& text, const std::string& what) {
  const std::string expected = fmt::format(
      "{}: expected an axis of the target (+x, -x, +y, -y, +z, -z) or three numbers such as "
      "0,-1,0; got '{}'",
      what, text);
  if (text.size() == 2 && (text[0] == '+' || text[0] == '-') && text[1] >= 'x' && text[1] <= 'z') {
    Eigen::Vector3d v = Eigen::Vector3d::Unit(text[1] - 'x');
    return text[0] == '-' ? Eigen::Vector3d(-v) : v;
  }
  std::stringstream in(text);
  Eigen::Vector3d v;
  char comma = 0;
  if (!(in >> v.x() >> comma) || comma != ',' || !(in >> v.y() >> comma) || comma != ',' ||
      !(in >> v.z()) || !in.eof() || !(v.norm() > 0) || !v.allFinite()) {
    throw InputError(expected);
  }
  return v.normalized();
}

std::vector<PointCorrespondence> TargetCorrespondences(const TargetView& view,
                                                       const CalibrationTarget& target,
                                                       const RigidTransform& world_from_target) {
  const std::vector<Eigen::Vector3d> features = target.FeaturePoints();
  std::vector<PointCorrespondence> points;
  for (size_t i = 0; i < view.ids.size(); ++i) {
    points.push_back({world_from_target.Apply(features.at(view.ids[i])), view.pixels[i]});
  }
  return points;
}

std::vector<PointCorrespondence> ReadSurveyPoints(const std::filesystem::path& path) {
  YamlMap map = YamlMap::LoadFile(path);
  const std::string units = map.OptionalString("units", "mm or m").value_or("m");
  if (units != "mm" && units != "m") map.Fail("units", "mm or m");
  const double scale = units == "mm" ? 1e-3 : 1.0;
  std::vector<PointCorrespondence> points;
  for (YamlMap& point : map.MapList("points")) {
    PointCorrespondence p;
    p.world_m = scale * point.Vector3("world", "[x, y, z] in the world frame (z up), in the "
                                               "file's units");
    const std::vector<double> pixel =
        point.Numbers("pixel", 2, "[u, v] in pixels of the original image");
    p.pixel = Eigen::Vector2d(pixel[0], pixel[1]);
    point.Finish();
    points.push_back(p);
  }
  map.Finish();
  return points;
}

}  // namespace tumbletrace
