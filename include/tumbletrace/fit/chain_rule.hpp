// Putting a value computed outside automatic differentiation back into it: a scalar y
// known with its gradient dy/dx_j with respect to some inputs x_j becomes, for Jet inputs,
// the Jet y with y.v = sum_j (dy/dx_j) x_j.v. For plain doubles it is just the value.
#pragma once

#include <ceres/jet.h>

namespace tumbletrace {

inline double ValueOf(double x) { return x; }
template <typename S, int N>
double ValueOf(const ceres::Jet<S, N>& x) {
  return x.a;
}

inline double Chained(double value, const double* /*gradient*/, const double* /*inputs*/,
                      int /*n*/) {
  return value;
}
template <int N>
ceres::Jet<double, N> Chained(double value, const double* gradient,
                              const ceres::Jet<double, N>* inputs, int n) {
  ceres::Jet<double, N> y(value);
  for (int j = 0; j < n; ++j) y.v += gradient[j] * inputs[j].v;
  return y;
}

}  // namespace tumbletrace
