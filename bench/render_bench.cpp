// Time to render one 1024 x 768 frame of a simulated throw: the tumbling paddle of
// tests/support/tumble_scenarios.hpp with ball markers, ray cast (occlusion and shadows) and
// flat, over the whole 400-frame flight. Args: supersampling, exposure samples.
#include <benchmark/benchmark.h>

#include "support/tumble_scenarios.hpp"
#include "tumbletrace/sim/simulate.hpp"

namespace tumbletrace {
namespace {

Simulation PaddleThrow(RenderMode mode, int supersampling, int exposure_samples) {
  Scenario s = testing::WobbleScenario(0.0, 7);
  for (Marker& m : s.body.markers) m.normal_body.reset();  // balls of 8 mm
  s.exposure_s = 0.0002;
  s.video.supersampling = supersampling;
  s.video.exposure_samples = exposure_samples;
  s.render.mode = mode;
  return SimulateFlight(s);
}

void RenderEveryFrame(benchmark::State& state, RenderMode mode) {
  const Simulation sim =
      PaddleThrow(mode, static_cast<int>(state.range(0)), static_cast<int>(state.range(1)));
  const int frames = static_cast<int>(sim.frames.size());
  int frame = 0;
  for (auto _ : state) {
    cv::Mat image = RenderSimulatedFrame(sim, frame);
    benchmark::DoNotOptimize(image.data);
    frame = (frame + 7) % frames;  // a spread of poses
  }
}

void BM_RaycastFrame(benchmark::State& state) { RenderEveryFrame(state, RenderMode::kRaycast); }
void BM_FlatFrame(benchmark::State& state) { RenderEveryFrame(state, RenderMode::kFlat); }

BENCHMARK(BM_RaycastFrame)
    ->Args({3, 4})->Args({4, 4})->Args({3, 8})->Args({4, 8})->Unit(benchmark::kMillisecond);
BENCHMARK(BM_FlatFrame)->Args({4, 8})->Unit(benchmark::kMillisecond);

// The truth of a ray-cast throw: motion and, per frame and marker, the sampled fractions.
void BM_SimulateRaycastTruth(benchmark::State& state) {
  for (auto _ : state) {
    const Simulation sim = PaddleThrow(RenderMode::kRaycast, 4, 8);
    benchmark::DoNotOptimize(sim.tracks.data());
  }
}
BENCHMARK(BM_SimulateRaycastTruth)->Unit(benchmark::kMillisecond);

}  // namespace
}  // namespace tumbletrace

BENCHMARK_MAIN();
