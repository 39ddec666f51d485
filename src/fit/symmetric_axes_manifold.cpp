#include "tumbletrace/fit/symmetric_axes_manifold.hpp"

#include <ceres/rotation.h>

#include <cmath>

namespace tumbletrace {

bool SymmetricAxesManifold::Plus(const double* x, const double* delta,
                                 double* x_plus_delta) const {
  const double angle_axis[3] = {delta[0], delta[1], 0.0};
  double step[4];
  ceres::AngleAxisToQuaternion(angle_axis, step);
  ceres::QuaternionProduct(x, step, x_plus_delta);
  return true;
}

// d/dd_k of x (x) [1, d/2] at d = 0: x (x) [0, e_k] / 2, row-major 4 x 2.
bool SymmetricAxesManifold::PlusJacobian(const double* x, double* jacobian) const {
  const double j[4][2] = {{-x[1], -x[2]}, {x[0], -x[3]}, {x[3], x[0]}, {-x[2], x[1]}};
  for (int r = 0; r < 4; ++r) {
    for (int c = 0; c < 2; ++c) jacobian[2 * r + c] = 0.5 * j[r][c];
  }
  return true;
}

bool SymmetricAxesManifold::Minus(const double* y, const double* x, double* y_minus_x) const {
  const double x_inverse[4] = {x[0], -x[1], -x[2], -x[3]};
  double z[4];
  ceres::QuaternionProduct(x_inverse, y, z);
  double angle_axis[3];
  ceres::QuaternionToAngleAxis(z, angle_axis);
  y_minus_x[0] = angle_axis[0];
  y_minus_x[1] = angle_axis[1];
  return true;
}

// The pseudo-inverse of the Plus Jacobian: its columns are orthogonal with norm 1/2.
bool SymmetricAxesManifold::MinusJacobian(const double* x, double* jacobian) const {
  double plus[8];
  PlusJacobian(x, plus);
  for (int r = 0; r < 4; ++r) {
    for (int c = 0; c < 2; ++c) jacobian[4 * c + r] = 4.0 * plus[2 * r + c];
  }
  return true;
}

}  // namespace tumbletrace
