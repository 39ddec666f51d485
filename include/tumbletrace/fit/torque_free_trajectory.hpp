// The torque-free rotation sampled at the fit's frame times, with its derivatives, for
// every residual of one camera at once.
//
// Integrating from t0 to each frame inside each residual would cost O(frames^2) per
// evaluation; instead one integration per evaluation serves all residuals: the state is
// integrated with ceres::Jet scalars over the five inputs that determine it (the angular
// velocity at t0 in the principal frame and the two moment parameters), which gives the
// derivatives of the integrator's own discrete map, and the residuals chain them into
// their Jets (fit/chain_rule.hpp). The samples are recomputed only when the inputs change;
// every residual of an evaluation sees the same inputs.
#pragma once

#include <array>
#include <vector>

namespace tumbletrace {

class TorqueFreeTrajectory {
 public:
  static constexpr int kInputs = 5;  // w0 (3, rad/s, principal frame at t0), s, d

  struct Sample {
    std::array<double, 4> u;                             // principal(t) into principal(t0)
    std::array<std::array<double, kInputs>, 4> du;       // d u / d (w0, s, d)
    std::array<double, 4> u_dot;                         // d u / d tau, 1/s
    std::array<double, 3> w;                             // rad/s, principal frame at t
  };

  // `base_taus_s`: the sample times relative to t0 before the camera's clock offset.
  TorqueFreeTrajectory(std::vector<double> base_taus_s, double max_step_angle_rad);

  // Makes the samples those of these inputs at base_taus + offset (a no-op when unchanged).
  void Update(const double w0_radps[3], const double moments_sd[2], double offset_s);

  const Sample& sample(int i) const { return samples_[i]; }
  int size() const { return static_cast<int>(samples_.size()); }

 private:
  std::vector<double> base_taus_s_;
  double max_step_angle_rad_;
  std::array<double, 6> key_{};
  bool valid_ = false;
  double planned_rate_radps_ = 0.0;  // the rate the step plan is made for
  std::vector<Sample> samples_;
};

}  // namespace tumbletrace
