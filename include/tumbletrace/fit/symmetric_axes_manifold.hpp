// The principal frame of a symmetric top as a Ceres manifold: a unit quaternion p (body
// from principal) whose rotations about the symmetry axis (principal axis 3) are not
// parameters, since the two transverse moments are equal and those rotations change no
// prediction. p [+] d = p (x) Exp([d1, d2, 0]): rotations about principal axes 1 and 2.
#pragma once

#include <ceres/manifold.h>

namespace tumbletrace {

class SymmetricAxesManifold final : public ceres::Manifold {
 public:
  int AmbientSize() const override { return 4; }
  int TangentSize() const override { return 2; }
  bool Plus(const double* x, const double* delta, double* x_plus_delta) const override;
  bool PlusJacobian(const double* x, double* jacobian) const override;
  bool Minus(const double* y, const double* x, double* y_minus_x) const override;
  bool MinusJacobian(const double* x, double* jacobian) const override;
};

}  // namespace tumbletrace
