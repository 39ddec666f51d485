// The camera's pose in the world from points of known world position seen in one image:
// the target placed in the throw region (the world frame then defined by the target and
// the direction of gravity in it), or a few surveyed points.
//
// Pose by cv::solvePnP (SQPnP, with the iterative solver as a second candidate), refined by
// Levenberg-Marquardt (cv::solvePnPRefineLM). Its covariance: with r the reprojection
// residuals and J their Jacobian in the pose's tangent space (a rotation dtheta applied on
// the left in the camera frame, R <- Exp(dtheta) R, and the translation), Cov = s^2 (J^T J)^-1
// with s^2 = sum r^2 / (2n - 6) (the Gauss-Newton covariance of a least-squares estimate,
// e.g. Hartley & Zisserman, Multiple View Geometry, 2nd ed., sec. 5.2.3).
#pragma once

#include <Eigen/Core>
#include <filesystem>
#include <string>
#include <vector>

#include "tumbletrace/calibrate/detect_target.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

struct PointCorrespondence {
  Eigen::Vector3d world_m;
  Eigen::Vector2d pixel;   // distorted image, origin at the centre of the top-left pixel
};

struct CameraPose {
  RigidTransform camera_from_world;
  Eigen::Matrix<double, 6, 6> covariance = Eigen::Matrix<double, 6, 6>::Zero();  // rad, m
  Eigen::Vector3d sigma_rotation_deg = Eigen::Vector3d::Zero();   // about camera x, y, z
  Eigen::Vector3d sigma_translation_mm = Eigen::Vector3d::Zero(); // camera frame
  Eigen::Vector3d camera_centre_world_m = Eigen::Vector3d::Zero();
  Eigen::Vector3d sigma_camera_centre_mm = Eigen::Vector3d::Zero();  // world frame
  // 1-sigma angle of the world's vertical (z) as the camera sees it: what every direction
  // measured in the world (a launch angle, gravity's direction) inherits from the pose.
  double sigma_vertical_deg = 0.0;
  double rms_px = 0.0;     // per coordinate
  int points = 0;
};

// Throws DataError for fewer than 4 points or points that do not determine a pose.
CameraPose LocateCamera(const std::vector<PointCorrespondence>& points,
                        const CameraIntrinsics& intrinsics);

// The world frame from a target: origin at the target's origin, z up (against `down`, the
// direction of gravity in the target frame), x the target's x axis made horizontal (its y
// axis when x is within 25 deg of vertical), y = z cross x. Returns world_from_target.
// Throws InputError when `down` is zero.
RigidTransform WorldFromTarget(const Eigen::Vector3d& down_in_target);

// "+x", "-y", "+z" ... or three numbers "0,-1,0": gravity's direction in the target frame.
// Throws InputError with `what` naming the option.
Eigen::Vector3d ParseDirection(const std::string& text, const std::string& what);

// The target's features seen in `view`, in the world frame.
std::vector<PointCorrespondence> TargetCorrespondences(const TargetView& view,
                                                       const CalibrationTarget& target,
                                                       const RigidTransform& world_from_target);

// points.yaml: `units: m|mm` and `points: [{world: [x, y, z], pixel: [u, v]}, ...]`
// (docs/files.md). Throws InputError naming the file and key.
std::vector<PointCorrespondence> ReadSurveyPoints(const std::filesystem::path& path);

}  // namespace tumbletrace
