#include "tumbletrace/fit/aero_trajectory.hpp"

#include <ceres/jet.h>

#include <utility>

#include "tumbletrace/fit/aero.hpp"

namespace tumbletrace {

AeroTrajectory::AeroTrajectory(std::vector<double> base_taus_s,
                               std::array<double, 3> wind_world_mps)
    : base_taus_s_(std::move(base_taus_s)), wind_(wind_world_mps), samples_(base_taus_s_.size()) {}

void AeroTrajectory::Update(const double inputs[kInputs], double offset_s) {
  std::array<double, kInputs + 1> key;
  for (int j = 0; j < kInputs; ++j) key[j] = inputs[j];
  key[kInputs] = offset_s;
  if (valid_ && key == key_) return;
  using Jet = ceres::Jet<double, kInputs>;
  AeroInputs<Jet> in;
  for (int i = 0; i < 3; ++i) {
    in.v0[i] = Jet(inputs[i], i);
    in.g[i] = Jet(inputs[3 + i], 3 + i);
    in.w[i] = Jet(inputs[8 + i], 8 + i);
    in.wind[i] = wind_[i];
  }
  in.k = Jet(inputs[6], 6);
  in.k_lift = Jet(inputs[7], 7);
  std::vector<double> taus(base_taus_s_);
  for (double& tau : taus) tau += offset_s;
  const std::vector<AeroState<Jet>> states = PropagateAero(in, taus);
  for (size_t s = 0; s < states.size(); ++s) {
    Sample& out = samples_[s];
    for (int i = 0; i < 3; ++i) {
      out.dr[i] = states[s].dr[i].a;
      for (int j = 0; j < kInputs; ++j) out.ddr[i][j] = states[s].dr[i].v[j];
      out.v[i] = states[s].v[i].a;
    }
  }
  key_ = key;
  valid_ = true;
}

}  // namespace tumbletrace
