// Time of the whole free-flight fit (initialisation, robust pass, outlier pass, covariance)
// on simulated tracks: the constant-spin model on the test tool (6 markers, 0.2 px noise,
// 1000 frames/s), and the torque-free model on the wobbling paddle (8 markers on two
// faces, 2000 frames/s), forced and chosen automatically among the three models.
#include <benchmark/benchmark.h>

#include "support/scenarios.hpp"
#include "support/tumble_scenarios.hpp"
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
  options.rotation = RotationChoice::kConstantSpin;
  for (auto _ : state) {
    FitResult fit = FitFreeFlight(frames, s.body, s.camera, options);
    benchmark::DoNotOptimize(fit.rms_px);
  }
  state.counters["sightings"] = static_cast<double>(sim.tracks.size());
}
BENCHMARK(BM_FitFreeFlight)->Arg(125)->Arg(250)->Arg(500)->Arg(1000)->Unit(benchmark::kMillisecond);

// The wobble of tests/support/tumble_scenarios.hpp filmed at 2000 frames/s, thrown more
// slowly so that 1000 frames (0.5 s) stay in view. Arg: frames; second arg: 1 = free top
// forced, 0 = automatic choice (constant spin, symmetric and free top all fitted).
void BM_FitTumble(benchmark::State& state) {
  Scenario s = testing::WobbleScenario(0.2, 7);
  s.capture_fps = 2000;
  s.frames = static_cast<int>(state.range(0));
  s.launch_velocity_world_mps = {1.5, 0.0, 2.0};
  for (Marker& m : s.body.markers) m.normal_body.reset();  // spheres: all 8 seen in every frame
  const Simulation sim = SimulateFlight(s);
  const auto frames = GroupByFrame(sim.tracks, s.capture_fps);
  FitOptions options;
  options.gravity_world_mps2 = s.gravity_world_mps2;
  options.rotation = state.range(1) ? RotationChoice::kFreeTop : RotationChoice::kAuto;
  for (auto _ : state) {
    FitResult fit = FitFreeFlight(frames, s.body, s.camera, options);
    benchmark::DoNotOptimize(fit.rms_px);
  }
  state.counters["sightings"] = static_cast<double>(sim.tracks.size());
}
BENCHMARK(BM_FitTumble)
    ->Args({250, 1})->Args({500, 1})->Args({1000, 1})->Args({1000, 0})
    ->Unit(benchmark::kMillisecond)->Iterations(1);

}  // namespace
}  // namespace tumbletrace

BENCHMARK_MAIN();
