// The CM's flight through air: quadratic drag and a spin-dependent (Magnus) lift,
//   r' = v,   v' = g - k |v_r| v_r + k_L (w x v_r),   v_r = v - wind
// with k = rho C_d A / (2 m) [1/m] (quadratic drag on a reference area A, the usual form of
// exterior ballistics; common practice) and k_L [dimensionless] the Magnus coefficient of
// the classical F = S0 (w x v) force per unit mass, whose lift coefficient
// C_L = 2 m k_L |w x v_r| / (rho A |v_r|^2) grows with the spin ratio (common practice for
// spinning balls at low spin ratio). w is the body's angular velocity at t0 (world frame):
// exact for a constant spin, an approximation for a tumbling body, which the fit therefore
// offers lift only with the constant-spin model. The steady wind is given, not fitted.
//
// No closed form exists with both drag and gravity, so the state is integrated by the
// classical fourth-order Runge-Kutta method with steps of at most kAeroMaxStepS: the drag's
// time scale 1 / (k |v|) is at least a few tenths of a second for any thrown object, and
// RK4's error per step, of order (h k |v|)^5, is then below 1e-15 relative.
#pragma once

#include <algorithm>
#include <cmath>
#include <vector>

namespace tumbletrace {

constexpr double kAeroMaxStepS = 1e-3;

// Inputs of the motion besides r0 (which only shifts it).
template <typename T>
struct AeroInputs {
  T v0[3];      // m/s at t0
  T g[3];       // m/s^2
  T k;          // 1/m
  T k_lift;     // dimensionless
  T w[3];       // rad/s, world, at t0
  double wind[3] = {0, 0, 0};  // m/s, world
};

template <typename T>
struct AeroState {
  T dr[3];  // r - r0, m
  T v[3];   // m/s
};

template <typename T>
void AeroAcceleration(const AeroInputs<T>& in, const T v[3], T a[3]) {
  using std::sqrt;
  T vr[3];
  for (int i = 0; i < 3; ++i) vr[i] = v[i] - T(in.wind[i]);
  const T speed = sqrt(vr[0] * vr[0] + vr[1] * vr[1] + vr[2] * vr[2]);
  const T cross[3] = {in.w[1] * vr[2] - in.w[2] * vr[1], in.w[2] * vr[0] - in.w[0] * vr[2],
                      in.w[0] * vr[1] - in.w[1] * vr[0]};
  for (int i = 0; i < 3; ++i) a[i] = in.g[i] - in.k * speed * vr[i] + in.k_lift * cross[i];
}

template <typename T>
AeroState<T> AeroStep(const AeroInputs<T>& in, const AeroState<T>& x, double h) {
  T a1[3], a2[3], a3[3], a4[3], v2[3], v3[3], v4[3];
  AeroAcceleration(in, x.v, a1);
  for (int i = 0; i < 3; ++i) v2[i] = x.v[i] + (0.5 * h) * a1[i];
  AeroAcceleration(in, v2, a2);
  for (int i = 0; i < 3; ++i) v3[i] = x.v[i] + (0.5 * h) * a2[i];
  AeroAcceleration(in, v3, a3);
  for (int i = 0; i < 3; ++i) v4[i] = x.v[i] + h * a3[i];
  AeroAcceleration(in, v4, a4);
  AeroState<T> y;
  const double h6 = h / 6.0;
  for (int i = 0; i < 3; ++i) {
    y.dr[i] = x.dr[i] + h6 * (x.v[i] + 2.0 * v2[i] + 2.0 * v3[i] + v4[i]);
    y.v[i] = x.v[i] + h6 * (a1[i] + 2.0 * a2[i] + 2.0 * a3[i] + a4[i]);
  }
  return y;
}

// Integrates from tau = 0 (dr = 0, v = v0) to each of `taus` (seconds, any order and sign).
// The step count between samples depends on the times only, so the samples move smoothly
// with the inputs.
template <typename T>
std::vector<AeroState<T>> PropagateAero(const AeroInputs<T>& in, const std::vector<double>& taus,
                                        double max_step_s = kAeroMaxStepS) {
  std::vector<AeroState<T>> out(taus.size());
  std::vector<size_t> forward, backward;
  for (size_t i = 0; i < taus.size(); ++i) (taus[i] >= 0 ? forward : backward).push_back(i);
  std::sort(forward.begin(), forward.end(), [&](size_t a, size_t b) { return taus[a] < taus[b]; });
  std::sort(backward.begin(), backward.end(), [&](size_t a, size_t b) { return taus[a] > taus[b]; });
  for (const std::vector<size_t>* pass : {&forward, &backward}) {
    AeroState<T> x;
    for (int i = 0; i < 3; ++i) {
      x.dr[i] = T(0.0);
      x.v[i] = in.v0[i];
    }
    double tau = 0.0;
    for (size_t i : *pass) {
      const double span = taus[i] - tau;
      if (span != 0.0) {
        const int steps = std::max(1, static_cast<int>(std::ceil(std::abs(span) / max_step_s)));
        const double h = span / steps;
        for (int k = 0; k < steps; ++k) x = AeroStep(in, x, h);
      }
      tau = taus[i];
      out[i] = x;
    }
  }
  return out;
}

}  // namespace tumbletrace
