// Mass, centre of mass and inertia of a body from its parts list.
//
// CM = sum(m_i c_i) / sum(m_i); inertia about the CM = sum(I_i + m_i (|d_i|^2 E - d_i d_i^T))
// with d_i = c_i - CM (parallel-axis theorem). Part tensors from the standard handbook
// tables (solid cylinder: I_axis = m r^2 / 2, I_transverse = m (3 r^2 + h^2) / 12;
// box: I_x = m (b^2 + c^2) / 12; solid sphere: 2 m r^2 / 5; point mass: 0).
#pragma once

#include <Eigen/Core>
#include <vector>

#include "tumbletrace/model/body.hpp"

namespace tumbletrace {

struct MassProperties {
  double mass_kg = 0.0;
  Eigen::Vector3d cm_body_m = Eigen::Vector3d::Zero();
  Eigen::Matrix3d inertia_about_cm_kgm2 = Eigen::Matrix3d::Zero();  // body axes
};

// Mass properties of one part about its own CM, with that CM in the body frame.
MassProperties PartMassProperties(const Part& part);
// Combined; throws InputError when the list is empty or the total mass is not positive.
MassProperties CombineParts(const std::vector<Part>& parts);

// Principal moments ascending (I1 <= I2 <= I3) and axes (column k = axis k, right-handed).
struct PrincipalAxes {
  Eigen::Vector3d moments_kgm2;
  Eigen::Matrix3d axes_body;
};
PrincipalAxes Principal(const Eigen::Matrix3d& inertia_kgm2);

}  // namespace tumbletrace
