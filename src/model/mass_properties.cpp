#include "tumbletrace/model/mass_properties.hpp"

#include <Eigen/Eigenvalues>
#include <Eigen/Geometry>
#include <cmath>
#include <numbers>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

// The given mass, or density times volume.
double PartMass(const Part& part, double volume_m3) {
  return part.mass_kg ? *part.mass_kg : part.density_kgpm3.value_or(0.0) * volume_m3;
}

}  // namespace

// Part tensors about the part's own CM (standard handbook tables; see mass_properties.hpp).
MassProperties PartMassProperties(const Part& part) {
  constexpr double kPi = std::numbers::pi;
  const Eigen::Matrix3d identity = Eigen::Matrix3d::Identity();
  MassProperties props;
  switch (part.shape) {
    case PartShape::kCylinder: {
      // Solid cylinder, radius r, length h: V = pi r^2 h; I_axis = m r^2 / 2,
      // I_transverse = m (3 r^2 + h^2) / 12; as a tensor with unit axis a:
      // I = I_transverse (E - a a^T) + I_axis a a^T.
      const double r = part.diameter_m / 2.0, h = part.length_m;
      const Eigen::Vector3d a = part.axis_body.normalized();
      props.mass_kg = PartMass(part, kPi * r * r * h);
      const double axial = props.mass_kg * r * r / 2.0;
      const double transverse = props.mass_kg * (3.0 * r * r + h * h) / 12.0;
      const Eigen::Matrix3d aat = a * a.transpose();
      props.inertia_about_cm_kgm2 = transverse * (identity - aat) + axial * aat;
      props.cm_body_m = part.from_body_m + a * (h / 2.0);
      break;
    }
    case PartShape::kBox: {
      // Solid box, edges a, b, c along x, y, z: V = a b c;
      // I_x = m (b^2 + c^2) / 12, I_y = m (a^2 + c^2) / 12, I_z = m (a^2 + b^2) / 12.
      const Eigen::Vector3d s2 = part.size_m.cwiseProduct(part.size_m);
      props.mass_kg = PartMass(part, part.size_m.prod());
      props.inertia_about_cm_kgm2 =
          (props.mass_kg / 12.0 *
           Eigen::Vector3d(s2.y() + s2.z(), s2.x() + s2.z(), s2.x() + s2.y()))
              .asDiagonal();
      props.cm_body_m = part.center_body_m;
      break;
    }
    case PartShape::kSphere: {
      // Solid sphere, radius r: V = 4/3 pi r^3; I = 2 m r^2 / 5 about any axis.
      const double r = part.diameter_m / 2.0;
      props.mass_kg = PartMass(part, 4.0 / 3.0 * kPi * r * r * r);
      props.inertia_about_cm_kgm2 = 0.4 * props.mass_kg * r * r * identity;
      props.cm_body_m = part.center_body_m;
      break;
    }
    case PartShape::kPointMass:
      props.mass_kg = part.mass_kg.value_or(0.0);
      props.cm_body_m = part.center_body_m;
      break;
  }
  return props;
}

// CM = sum(m_i c_i) / sum(m_i); I = sum(I_i + m_i (|d_i|^2 E - d_i d_i^T)), d_i = c_i - CM
// (parallel-axis theorem, standard mechanics texts).
MassProperties CombineParts(const std::vector<Part>& parts) {
  if (parts.empty()) throw InputError("the parts list is empty; expected at least one part");
  std::vector<MassProperties> each;
  MassProperties total;
  Eigen::Vector3d moment_kgm = Eigen::Vector3d::Zero();
  for (const Part& part : parts) {
    each.push_back(PartMassProperties(part));
    total.mass_kg += each.back().mass_kg;
    moment_kgm += each.back().mass_kg * each.back().cm_body_m;
  }
  if (!(total.mass_kg > 0)) {
    throw InputError("the parts list has no mass; expected a positive total mass");
  }
  total.cm_body_m = moment_kgm / total.mass_kg;
  for (const MassProperties& part : each) {
    const Eigen::Vector3d d = part.cm_body_m - total.cm_body_m;
    total.inertia_about_cm_kgm2 +=
        part.inertia_about_cm_kgm2 +
        part.mass_kg * (d.squaredNorm() * Eigen::Matrix3d::Identity() - d * d.transpose());
  }
  return total;
}

// Eigen-decomposition of the symmetric tensor, moments ascending. Signs fixed for
// repeatability: axes 1 and 2 have their largest component positive, axis 3 = axis 1 x axis 2.
PrincipalAxes Principal(const Eigen::Matrix3d& inertia_kgm2) {
  const Eigen::Matrix3d symmetric = 0.5 * (inertia_kgm2 + inertia_kgm2.transpose());
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver(symmetric);
  PrincipalAxes result;
  result.moments_kgm2 = solver.eigenvalues();
  Eigen::Matrix3d axes = solver.eigenvectors();
  for (int k = 0; k < 2; ++k) {
    Eigen::Index largest = 0;
    axes.col(k).cwiseAbs().maxCoeff(&largest);
    if (axes(largest, k) < 0) axes.col(k) = -axes.col(k);
  }
  axes.col(2) = axes.col(0).cross(axes.col(1)).normalized();
  result.axes_body = axes;
  return result;
}

}  // namespace tumbletrace
