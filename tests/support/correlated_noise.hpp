// Track noise that is not independent: each marker's x and y errors follow their own
// stationary AR(1) series in frame order (a gap of g frames correlates as rho^g), with a
// standard deviation of its own per marker. Fixed seeds.
#pragma once

#include <algorithm>
#include <cmath>
#include <functional>
#include <map>
#include <random>
#include <tuple>
#include <vector>

#include "support/fit_helpers.hpp"

namespace tumbletrace::testing {

struct CorrelatedNoise {
  double rho = 0.0;  // lag-1 coefficient of every series
  // Standard deviation of marker `id`'s errors (both coordinates), px.
  std::function<double(int marker_id)> sigma_px = [](int) { return 0.2; };
};

// Per-marker levels spread evenly over [low, high] by marker id 1..markers.
inline std::function<double(int)> SpreadSigma(double low_px, double high_px, int markers) {
  return [=](int id) { return low_px + (high_px - low_px) * (id - 1) / std::max(1, markers - 1); };
}

// Adds the noise to identified points. e_t = rho^g e_prev + sqrt(1 - rho^2g) sigma w_t,
// w standard normal (the exact discrete AR(1) at the sampled frames, stationary from the
// first: Box & Jenkins, ch. 3).
inline void AddCorrelatedNoise(std::vector<TrackPoint>* tracks, const CorrelatedNoise& noise,
                               std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::map<std::pair<int, int>, std::vector<TrackPoint*>> series;  // (camera, marker)
  for (TrackPoint& p : *tracks) {
    if (p.marker) series[{p.camera, *p.marker}].push_back(&p);
  }
  for (auto& [key, points] : series) {
    std::stable_sort(points.begin(), points.end(),
                     [](const TrackPoint* a, const TrackPoint* b) { return a->frame < b->frame; });
    const double sigma = noise.sigma_px(key.second);
    double ex = sigma * normal(rng), ey = sigma * normal(rng);
    for (size_t k = 0; k < points.size(); ++k) {
      if (k > 0) {
        const double a = std::pow(noise.rho, points[k]->frame - points[k - 1]->frame);
        const double b = sigma * std::sqrt(std::max(1.0 - a * a, 0.0));
        ex = a * ex + b * normal(rng);
        ey = a * ey + b * normal(rng);
      }
      points[k]->x_px += ex;
      points[k]->y_px += ey;
    }
  }
}

// A bias that turns with the body: each series (camera x marker x coordinate) gets
// amplitude_px sin(2 pi rate t + phase), phase uniform at random per series, `rate` the
// body's spin in rev/s (a shaded marker's centroid pulled towards the light by an amount
// that repeats each turn). Not AR(1)-shaped: periodic, with no decay.
inline void AddSpinLockedBias(std::vector<TrackPoint>* tracks, double amplitude_px,
                              double rate_rev_per_s, double capture_fps, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> phase(0.0, 2 * M_PI);
  std::map<std::tuple<int, int, int>, double> phase_of;
  for (TrackPoint& p : *tracks) {
    if (!p.marker) continue;
    for (int c = 0; c < 2; ++c) {
      auto [it, added] = phase_of.emplace(std::make_tuple(p.camera, *p.marker, c), 0.0);
      if (added) it->second = phase(rng);
      const double t_s = p.frame / capture_fps;
      (c == 0 ? p.x_px : p.y_px) +=
          amplitude_px * std::sin(2 * M_PI * rate_rev_per_s * t_s + it->second);
    }
  }
}

// Simulates the scenario without track noise, adds `noise` with `seed`, fits.
inline Recovery SimulateAndFitWithNoise(Scenario s, const FitOptions& options,
                                        const CorrelatedNoise& noise, std::uint64_t seed) {
  s.tracks_sigma_px = 0.0;
  Recovery r;
  r.sim = SimulateFlight(s);
  AddCorrelatedNoise(&r.sim.tracks, noise, seed);
  FitSimulatedTracks(options, &r);
  return r;
}

}  // namespace tumbletrace::testing
