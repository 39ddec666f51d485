// The checks of the strong-drag tumbling paddle (tumble_scenarios.hpp, FoamPaddleScenario):
// the fit's rms against the noise, the CM against its reported sigma, and k against the
// truth, shared by the default suite's few seeds and the long run over many.
#pragma once

#include <cmath>
#include <cstdio>

#include "support/fit_helpers.hpp"
#include "support/tumble_scenarios.hpp"

namespace tumbletrace::testing {

struct PaddleOutcome {
  double rms_over_noise = 0.0;
  double cm_worst_sigmas = 0.0;  // the largest |error| / sigma of the three components
  double k_relative_error = 0.0;
  int outliers = 0;
  bool free_top_with_drag = false;
};

inline PaddleOutcome FitFoamPaddle(std::uint64_t seed) {
  const Scenario s = FoamPaddleScenario(0.05, seed);
  const Recovery r = SimulateAndFit(s, DefaultFitOptions(s));
  PaddleOutcome out;
  out.rms_over_noise = r.fit.rms_px / s.tracks_sigma_px;
  for (int i = 0; i < 3; ++i) {
    const double error = r.summary.cm_body_m[i].value_or(1e9) - r.sim.mass.cm_body_m[i];
    const double sigma = r.summary.cm_sigma_m[i].value_or(1e-12);
    out.cm_worst_sigmas = std::max(out.cm_worst_sigmas, std::abs(error) / sigma);
  }
  out.k_relative_error = r.fit.parameters.aero[0] / s.aero.k_per_m - 1.0;
  out.outliers = r.fit.outliers;
  out.free_top_with_drag = r.fit.parameters.rotation_model == RotationModel::kFreeTop &&
                           r.fit.parameters.translation_model == TranslationModel::kDrag;
  std::printf("paddle seed %llu: rms / noise %.3f, CM worst %.2f sigma, k %+.2f %%, outliers %d, "
              "%s, %s\n",
              static_cast<unsigned long long>(seed), out.rms_over_noise, out.cm_worst_sigmas,
              100 * out.k_relative_error, out.outliers,
              RotationModelName(r.fit.parameters.rotation_model),
              TranslationModelName(r.fit.parameters.translation_model));
  return out;
}

// The bounds: rms within 1.2 times the noise, CM within 3 sigma, k within 3 %.
inline bool WithinPaddleBounds(const PaddleOutcome& o) {
  return o.free_top_with_drag && o.rms_over_noise < 1.2 && o.cm_worst_sigmas < 3.0 &&
         std::abs(o.k_relative_error) < 0.03;
}

}  // namespace tumbletrace::testing
