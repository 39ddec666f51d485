// Time of the whole free-flight fit (initialisation, robust pass, outlier pass, covariance)
// on simulated tracks of the test tool: 6 markers, 0.2 px noise, 1000 frames/s.
#include <benchmark/benchmark.h>

#include "support/scenarios.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/sim/simulate.hpp"

namespace tumbletrace {
namespace {

void BM_FitFreeFlight(benchmark::State& state) {
  Scenario s = testing::ObliqueSpinScenario(0.2, 7);
  s.frames = static_cast<int>(state.range(0));
  s.launch_velocity_world_mps *= 250.0 / s.frames;  // keep the flight in view
  const Simulation sim = SimulateFlight(s);
  const auto frames = GroupByFrame(sim.tracks, s.capture_fps);
  FitOptions options;
  options.gravity_world_mps2 = s.gravity_world_mps2;
  for (auto _ : state) {
    FitResult fit = FitFreeFlight(frames, s.body, s.camera, options);
    benchmark::DoNotOptimize(fit.rms_px);
  }
  state.counters["sightings"] = static_cast<double>(sim.tracks.size());
}
BENCHMARK(BM_FitFreeFlight)->Arg(125)->Arg(250)->Arg(500)->Arg(1000)->Unit(benchmark::kMillisecond);

}  // namespace
}  // namespace tumbletrace

BENCHMARK_MAIN();
