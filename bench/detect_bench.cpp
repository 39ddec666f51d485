// Speed of the marker detector on one marker's search region (48 x 48 px: a shaded sphere of
// radius 6 px, head-on and side light), by centre method: the outline fit's cost per blob is
// the difference. Run: build/bench/detect_bench
#include <benchmark/benchmark.h>

#include "support/shaded_marker_patch.hpp"
#include "tumbletrace/detect/marker_detector.hpp"

namespace {

void DetectOneSphere(benchmark::State& state, tumbletrace::CentreMethod centre) {
  tumbletrace::testing::ShadedMarkerOptions sphere;
  sphere.radius_px = 6.0;
  sphere.light_elevation_rad = 0.5 * state.range(0) * 0.0174533;
  const cv::Mat patch = tumbletrace::testing::RenderShadedMarker(sphere);
  tumbletrace::DetectorOptions options;
  options.background_radius_px = 12;
  options.centre = centre;
  tumbletrace::MarkerDetector detector(options);
  const std::vector<cv::Rect> region = {cv::Rect(0, 0, patch.cols, patch.rows)};
  detector.Detect(patch);  // the noise estimate, once
  for (auto _ : state) benchmark::DoNotOptimize(detector.Detect(patch, region));
}

void Outline(benchmark::State& state) { DetectOneSphere(state, tumbletrace::CentreMethod::kOutline); }
void Centroid(benchmark::State& state) {
  DetectOneSphere(state, tumbletrace::CentreMethod::kCentroid);
}

BENCHMARK(Outline)->Arg(0)->Arg(120);  // light elevation x 2, degrees
BENCHMARK(Centroid)->Arg(0)->Arg(120);

}  // namespace

BENCHMARK_MAIN();
