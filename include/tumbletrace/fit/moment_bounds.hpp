// The bounds of the moment parameters [s, d] of the torque-free models, moments
// (I1, I2, I3) = (s - d, s + d, 1):
//   s >= 0.5           I1 + I2 >= I3 (the triangle inequality of principal moments)
//   |d| <= 0.499       |I2 - I1| <= I3 (the other two), kept 0.001 I3 inside it, so that
//                      no moment reaches zero (a needle: Euler's equations divide by it)
// A thin flat body lies on the boundary (I_large = I_small + I_mid for a lamina, the
// perpendicular-axis theorem), so the bounds are the inequalities themselves, not a
// margin inside them.
#pragma once

#include <ceres/problem.h>

namespace tumbletrace {

constexpr double kMomentSumMin = 0.5;
constexpr double kMomentDifferenceMax = 0.499;

inline void BoundMoments(ceres::Problem* problem, double* sd, bool symmetric) {
  problem->SetParameterLowerBound(sd, 0, kMomentSumMin);
  if (!symmetric) {
    problem->SetParameterLowerBound(sd, 1, -kMomentDifferenceMax);
    problem->SetParameterUpperBound(sd, 1, kMomentDifferenceMax);
  }
}

}  // namespace tumbletrace
