// The CM's path through air (fit/aero.hpp) sampled at the fit's frame times, with its
// derivatives, for every residual of one camera at once: one integration per evaluation
// with ceres::Jet scalars over the inputs that determine it (v0, g, k, k_L, w), whose
// sensitivities each residual chains into its own Jets (fit/chain_rule.hpp), as the
// torque-free rotation does (fit/torque_free_trajectory.hpp).
#pragma once

#include <array>
#include <vector>

#include "tumbletrace/fit/chain_rule.hpp"

namespace tumbletrace {

class AeroTrajectory {
 public:
  static constexpr int kInputs = 11;  // v0 (3), g (3), k, k_L, w (3)

  struct Sample {
    std::array<double, 3> dr;                       // r - r0, m
    std::array<std::array<double, kInputs>, 3> ddr;  // d dr / d inputs
    std::array<double, 3> v;                        // velocity, m/s (d dr / d tau)
  };

  // `base_taus_s`: the sample times relative to t0 before the camera's clock offset.
  AeroTrajectory(std::vector<double> base_taus_s, std::array<double, 3> wind_world_mps);

  // Makes the samples those of these inputs at base_taus + offset (a no-op when unchanged).
  void Update(const double inputs[kInputs], double offset_s);

  const Sample& sample(int i) const { return samples_[i]; }

 private:
  std::vector<double> base_taus_s_;
  std::array<double, 3> wind_;
  std::array<double, kInputs + 1> key_{};
  bool valid_ = false;
  std::vector<Sample> samples_;
};

// The CM's position for any scalar: r(t) = r0 + dr(tau; v0, g, k, k_L, w), tau = t - t0
// (+ the camera's clock offset `offset_s`, a parameter or T(0)).
template <typename T>
void AeroPosition(const T* r0_world_m, const T* v0_world_mps, const T* g_world_mps2,
                  const T* aero, const T* omega_world_radps, const T& offset_s,
                  AeroTrajectory& trajectory, int sample, T* r_world_m) {
  constexpr int n = AeroTrajectory::kInputs;
  const T inputs[n + 1] = {v0_world_mps[0], v0_world_mps[1], v0_world_mps[2],
                           g_world_mps2[0], g_world_mps2[1], g_world_mps2[2],
                           aero[0],         aero[1],         omega_world_radps[0],
                           omega_world_radps[1], omega_world_radps[2], offset_s};
  double values[n];
  for (int j = 0; j < n; ++j) values[j] = ValueOf(inputs[j]);
  trajectory.Update(values, ValueOf(offset_s));
  const AeroTrajectory::Sample& s = trajectory.sample(sample);
  for (int i = 0; i < 3; ++i) {
    double gradient[n + 1];
    for (int j = 0; j < n; ++j) gradient[j] = s.ddr[i][j];
    gradient[n] = s.v[i];
    r_world_m[i] = r0_world_m[i] + Chained(s.dr[i], gradient, inputs, n + 1);
  }
}

}  // namespace tumbletrace
