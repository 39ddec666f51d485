#include "tumbletrace/fit/torque_free_trajectory.hpp"

#include <ceres/jet.h>

#include <utility>

#include "tumbletrace/fit/torque_free.hpp"

namespace tumbletrace {

TorqueFreeTrajectory::TorqueFreeTrajectory(std::vector<double> base_taus_s,
                                           double max_step_angle_rad)
    : base_taus_s_(std::move(base_taus_s)),
      max_step_angle_rad_(max_step_angle_rad),
      samples_(base_taus_s_.size()) {}

void TorqueFreeTrajectory::Update(const double w0_radps[3], const double moments_sd[2],
                                  double offset_s) {
  const std::array<double, 6> key = {w0_radps[0],    w0_radps[1],    w0_radps[2],
                                     moments_sd[0], moments_sd[1], offset_s};
  if (valid_ && key == key_) return;
  using Jet = ceres::Jet<double, kInputs>;
  TorqueFreeState<Jet> x0;
  x0.u[0] = Jet(1.0);
  x0.u[1] = x0.u[2] = x0.u[3] = Jet(0.0);
  for (int i = 0; i < 3; ++i) x0.w[i] = Jet(w0_radps[i], i);
  const Jet s(moments_sd[0], 3), d(moments_sd[1], 4);
  const Jet moments[3] = {s - d, s + d, Jet(1.0)};
  const double moment_values[3] = {moments_sd[0] - moments_sd[1], moments_sd[0] + moments_sd[1],
                                    1.0};
  std::vector<double> taus(base_taus_s_);
  for (double& tau : taus) tau += offset_s;
  // The step plan changes only when the rate leaves [1/4, 1] of what it was made for:
  // a step count that followed every change of the inputs would make the samples jump
  // (by the integrator's tiny error) under the small changes of a numerical derivative or
  // of the solver's last iterations.
  const double rate = TorqueFreeMaxRate(w0_radps, moment_values);
  if (rate > planned_rate_radps_ || rate < 0.25 * planned_rate_radps_) {
    planned_rate_radps_ = 1.2 * rate;
  }
  const std::vector<TorqueFreeState<Jet>> states =
      PropagateTorqueFree(moments, x0, taus, planned_rate_radps_, max_step_angle_rad_);
  for (size_t i = 0; i < states.size(); ++i) {
    Sample& out = samples_[i];
    TorqueFreeState<double> value;
    for (int k = 0; k < 4; ++k) {
      value.u[k] = states[i].u[k].a;
      out.u[k] = value.u[k];
      for (int j = 0; j < kInputs; ++j) out.du[k][j] = states[i].u[k].v[j];
    }
    for (int k = 0; k < 3; ++k) {
      value.w[k] = states[i].w[k].a;
      out.w[k] = value.w[k];
    }
    const TorqueFreeState<double> rate = TorqueFreeDerivative(moment_values, value);
    for (int k = 0; k < 4; ++k) out.u_dot[k] = rate.u[k];
  }
  key_ = key;
  valid_ = true;
}

}  // namespace tumbletrace
