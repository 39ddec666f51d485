// Torque-free rotation of a rigid body in its principal frame, for the fit (any scalar
// type: double for values, ceres::Jet for derivatives).
//
//   Euler's equations   I1 w1' = (I2 - I3) w2 w3,  I2 w2' = (I3 - I1) w3 w1,
//                       I3 w3' = (I1 - I2) w1 w2                 (w in the principal frame)
//   kinematics          u' = u (x) [0, w] / 2                    (u: principal frame at t
//                                                                  into the frame at t0)
// integrated by the classical fourth-order Runge-Kutta method with steps short enough that
// the body turns by at most `max_step_angle_rad` per step, the quaternion renormalised
// after each step. Only the ratios of the moments matter; the fit uses
// (I1, I2, I3) = (s - d, s + d, 1).
//
// The simulator integrates the same equations with its own code (sim/motion.hpp): the two
// are checked against each other and against the closed forms of the symmetric and the
// asymmetric top (tests/fit/torque_free_test.cpp).
#pragma once

#include <algorithm>
#include <cmath>
#include <vector>

namespace tumbletrace {

template <typename T>
struct TorqueFreeState {
  T u[4];  // [w, x, y, z]
  T w[3];  // rad/s, principal frame
};

template <typename T>
TorqueFreeState<T> TorqueFreeDerivative(const T moments[3], const TorqueFreeState<T>& x) {
  TorqueFreeState<T> dx;
  dx.w[0] = (moments[1] - moments[2]) * x.w[1] * x.w[2] / moments[0];
  dx.w[1] = (moments[2] - moments[0]) * x.w[2] * x.w[0] / moments[1];
  dx.w[2] = (moments[0] - moments[1]) * x.w[0] * x.w[1] / moments[2];
  // u (x) [0, w] / 2
  const T half(0.5);
  dx.u[0] = -half * (x.u[1] * x.w[0] + x.u[2] * x.w[1] + x.u[3] * x.w[2]);
  dx.u[1] = half * (x.u[0] * x.w[0] + x.u[2] * x.w[2] - x.u[3] * x.w[1]);
  dx.u[2] = half * (x.u[0] * x.w[1] + x.u[3] * x.w[0] - x.u[1] * x.w[2]);
  dx.u[3] = half * (x.u[0] * x.w[2] + x.u[1] * x.w[1] - x.u[2] * x.w[0]);
  return dx;
}

template <typename T>
TorqueFreeState<T> TorqueFreeAxpy(const TorqueFreeState<T>& x, double h,
                                  const TorqueFreeState<T>& dx) {
  TorqueFreeState<T> y;
  for (int i = 0; i < 4; ++i) y.u[i] = x.u[i] + h * dx.u[i];
  for (int i = 0; i < 3; ++i) y.w[i] = x.w[i] + h * dx.w[i];
  return y;
}

// One classical Runge-Kutta step of length h (negative: backwards).
template <typename T>
TorqueFreeState<T> TorqueFreeStep(const T moments[3], const TorqueFreeState<T>& x, double h) {
  const TorqueFreeState<T> k1 = TorqueFreeDerivative(moments, x);
  const TorqueFreeState<T> k2 = TorqueFreeDerivative(moments, TorqueFreeAxpy(x, 0.5 * h, k1));
  const TorqueFreeState<T> k3 = TorqueFreeDerivative(moments, TorqueFreeAxpy(x, 0.5 * h, k2));
  const TorqueFreeState<T> k4 = TorqueFreeDerivative(moments, TorqueFreeAxpy(x, h, k3));
  TorqueFreeState<T> y;
  const double h6 = h / 6.0;
  for (int i = 0; i < 4; ++i) y.u[i] = x.u[i] + h6 * (k1.u[i] + 2.0 * k2.u[i] + 2.0 * k3.u[i] + k4.u[i]);
  for (int i = 0; i < 3; ++i) y.w[i] = x.w[i] + h6 * (k1.w[i] + 2.0 * k2.w[i] + 2.0 * k3.w[i] + k4.w[i]);
  using std::sqrt;
  const T norm = sqrt(y.u[0] * y.u[0] + y.u[1] * y.u[1] + y.u[2] * y.u[2] + y.u[3] * y.u[3]);
  for (int i = 0; i < 4; ++i) y.u[i] /= norm;
  return y;
}

// The largest angular speed the body reaches, for the step plan. With x_i = w_i^2 the
// motion keeps sum I_i x_i = 2E and sum I_i^2 x_i = L^2 (both conserved) and x_i >= 0; the
// largest sum x_i = |w|^2 on that set is a linear programme whose optimum lies at a vertex,
// where at most two x_i are non-zero: so the largest over the pairs (i, j) whose 2 x 2
// system has a non-negative solution is the exact bound.
inline double TorqueFreeMaxRate(const double w[3], const double moments[3]) {
  double energy2 = 0.0, momentum2 = 0.0, initial2 = 0.0;
  for (int i = 0; i < 3; ++i) {
    energy2 += moments[i] * w[i] * w[i];
    momentum2 += moments[i] * moments[i] * w[i] * w[i];
    initial2 += w[i] * w[i];
  }
  double best2 = initial2;
  for (int i = 0; i < 3; ++i) {
    for (int j = i + 1; j < 3; ++j) {
      // I_i x_i + I_j x_j = 2E, I_i^2 x_i + I_j^2 x_j = L^2.
      const double det = moments[i] * moments[j] * (moments[j] - moments[i]);
      if (std::abs(det) < 1e-12 * moments[i] * moments[j] * (moments[i] + moments[j])) continue;
      const double xi = (energy2 * moments[j] * moments[j] - momentum2 * moments[j]) / det;
      const double xj = (momentum2 * moments[i] - energy2 * moments[i] * moments[i]) / det;
      const double slack = 1e-9 * initial2;
      if (xi >= -slack && xj >= -slack) best2 = std::max(best2, xi + xj);
    }
  }
  return std::sqrt(best2);
}

// The default step bound: RK4's error per step grows as the fifth power of the turn per
// step; 0.006 rad keeps the energy and the world angular momentum to ~2e-11 relative over
// a 1 s window of a fast tumble (tests/fit/torque_free_test.cpp prints the drift for
// 0.002 to 0.032 rad: 3e-12 at 0.004, 5e-11 at 0.008).
constexpr double kTorqueFreeMaxStepAngleRad = 0.006;

// Integrates from tau = 0 (state x0) to each of `taus` (seconds, any order and sign) and
// returns the states there. `max_rate_radps` bounds |w| over the flight (see above).
template <typename T>
std::vector<TorqueFreeState<T>> PropagateTorqueFree(const T moments[3],
                                                    const TorqueFreeState<T>& x0,
                                                    const std::vector<double>& taus,
                                                    double max_rate_radps,
                                                    double max_step_angle_rad) {
  std::vector<TorqueFreeState<T>> out(taus.size());
  std::vector<size_t> order(taus.size());
  for (size_t i = 0; i < order.size(); ++i) order[i] = i;
  // Forwards through the positive taus in increasing order, backwards through the
  // negative ones in decreasing order, both from tau = 0.
  std::vector<size_t> forward, backward;
  for (size_t i : order) (taus[i] >= 0 ? forward : backward).push_back(i);
  std::sort(forward.begin(), forward.end(), [&](size_t a, size_t b) { return taus[a] < taus[b]; });
  std::sort(backward.begin(), backward.end(), [&](size_t a, size_t b) { return taus[a] > taus[b]; });
  for (const std::vector<size_t>* pass : {&forward, &backward}) {
    TorqueFreeState<T> x = x0;
    double tau = 0.0;
    for (size_t i : *pass) {
      const double span = taus[i] - tau;
      const int steps = std::max(
          1, static_cast<int>(std::ceil(std::abs(span) * max_rate_radps / max_step_angle_rad)));
      if (span != 0.0) {
        const double h = span / steps;
        for (int k = 0; k < steps; ++k) x = TorqueFreeStep(moments, x, h);
      }
      tau = taus[i];
      out[i] = x;
    }
  }
  return out;
}

}  // namespace tumbletrace
