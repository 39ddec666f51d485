// Small rotation helpers of the fit's start (Eigen, double).
#pragma once

#include <Eigen/Dense>
#include <Eigen/Geometry>
#include <vector>

namespace tumbletrace {

// Rotation vector of a rotation matrix (log map), radians.
inline Eigen::Vector3d LogRotation(const Eigen::Matrix3d& r) {
  const Eigen::AngleAxisd aa(r);
  return aa.angle() * aa.axis();
}

inline Eigen::Matrix3d ExpRotation(const Eigen::Vector3d& w) {
  const double angle = w.norm();
  if (angle < 1e-15) return Eigen::Matrix3d::Identity();
  return Eigen::AngleAxisd(angle, w / angle).toRotationMatrix();
}

// The mean rotation: the principal eigenvector of sum(q q^T) over unit quaternions
// (Markley, Cheng, Crassidis, Oshman, "Averaging Quaternions", J. Guidance, Control and
// Dynamics 30(4), 2007 — from memory); insensitive to the sign of each q.
inline Eigen::Quaterniond MeanRotation(const std::vector<Eigen::Quaterniond>& qs) {
  Eigen::Matrix4d m = Eigen::Matrix4d::Zero();
  for (const auto& q : qs) m += q.coeffs() * q.coeffs().transpose();
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix4d> eig(m);
  const Eigen::Vector4d v = eig.eigenvectors().col(3);
  return Eigen::Quaterniond(v[3], v[0], v[1], v[2]).normalized();  // coeffs are x y z w
}

}  // namespace tumbletrace
