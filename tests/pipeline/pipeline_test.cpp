// End to end from a rendered clip: detection, tracking, identification and the fit, against
// the simulator's truth. Clips have sensor noise and motion blur; the H.264 ones also carry
// the codec's loss.
#include "tumbletrace/pipeline/pipeline.hpp"

#include <gtest/gtest.h>

#include <fstream>

#include "support/scenarios.hpp"
#include "support/temp_dir.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/sim/simulate.hpp"

namespace tumbletrace {
namespace {

Scenario ClipScenario(Scenario s) {
  s.exposure_s = 0.0002;       // blur of up to about 0.5 px
  s.image_sigma_levels = 2.0;  // sensor noise
  s.video.write = true;
  s.video.exposure_samples = 6;
  return s;
}

struct ClipRun {
  Simulation sim;
  Session session;
  Analysis analysis;
};

ClipRun SimulateWriteAnalyze(const Scenario& scenario, const std::filesystem::path& dir,
                         const std::function<void(const std::filesystem::path&)>& tamper = {}) {
  ClipRun run;
  run.sim = SimulateFlight(scenario);
  WriteSimulation(run.sim, dir, {});
  if (tamper) tamper(dir);
  run.session = ReadSessionYaml(dir / "session.yaml");
  run.analysis = AnalyzeSession(run.session, TrackingOptions{}, FitOptionsFor(run.session), {});
  return run;
}

// Detected centres against the exact projections; identification; the bounds on
// the CM (3 sigma and 1.5 mm), velocity (0.5 %) and spin (0.2 %).
void ExpectGoodRun(const ClipRun& run, double max_centre_rms_px = 0.15) {
  // Every identified point is nearest its own marker's true pixel (identification); the
  // rms is over points within 1 px of it, the others (a glint on a dot) at most 1 %.
  double sum_sq = 0.0;
  int n = 0, disturbed = 0;
  for (const TrackPoint& p : run.analysis.tracking.points) {
    if (!p.marker) continue;
    const Eigen::Vector2d seen(p.x_px, p.y_px);
    const auto& markers = run.sim.frames.at(p.frame).markers;
    const double d = (seen - markers.at(*p.marker - 1).pixel).norm();
    for (const MarkerTruth& other : markers) {
      if (other.id != *p.marker && other.visible) {
        ASSERT_LT(d, (seen - other.pixel).norm()) << "frame " << p.frame << ": marker "
                                                  << *p.marker << " misidentified";
      }
    }
    if (d >= 1.0) {
      ++disturbed;
      continue;
    }
    sum_sq += d * d;
    ++n;
  }
  const double rms = std::sqrt(sum_sq / (2.0 * n));  // per coordinate
  std::printf("detected centres: rms %.4f px per coordinate over %d sightings (%d more than "
              "1 px off)\n", rms, n, disturbed);
  EXPECT_LT(rms, max_centre_rms_px);
  EXPECT_LE(disturbed, n / 100);

  const FlightSummary& s = run.analysis.summary;
  const Eigen::Vector3d& cm = run.sim.mass.cm_body_m;
  for (int i = 0; i < 2; ++i) {
    ASSERT_TRUE(s.cm_body_m[i].has_value());
    const double error = std::abs(*s.cm_body_m[i] - cm[i]);
    std::printf("c_%c error %.4f mm, sigma %.4f mm\n", "xy"[i], 1e3 * error, 1e3 * *s.cm_sigma_m[i]);
    EXPECT_LT(error, 3.0 * *s.cm_sigma_m[i]);
    EXPECT_LT(error, 1.5e-3);
  }
  EXPECT_FALSE(s.cm_body_m[2].has_value());
  const RigidState& launch = run.sim.frames.at(s.launch_frame).state;
  const double speed = launch.velocity_world_mps.norm();
  EXPECT_LT((s.launch_velocity_mps - launch.velocity_world_mps).norm(), 5e-3 * speed);
  const double rate = launch.omega_body_radps.norm() / (2 * M_PI);
  EXPECT_LT(std::abs(s.rate_rev_per_s - rate), 2e-3 * rate);
}

TEST(Pipeline, PlanarSpinClipWithBlurAndNoise) {
  testing::TempDir dir("pipeline_planar");
  const ClipRun run = SimulateWriteAnalyze(ClipScenario(testing::PlanarSpinScenario(0.0, 41)), dir.path());
  ExpectGoodRun(run);
  EXPECT_EQ(run.analysis.tracking.cameras.at(0).identification.marker_of_track.size(), 6u);
}

TEST(Pipeline, ObliqueViewClip) {
  testing::TempDir dir("pipeline_oblique");
  ExpectGoodRun(SimulateWriteAnalyze(ClipScenario(testing::ObliqueSpinScenario(0.0, 42)), dir.path()));
}

TEST(Pipeline, MarkerHiddenForTwentyFrames) {
  testing::TempDir dir("pipeline_hidden");
  Scenario s = ClipScenario(testing::PlanarSpinScenario(0.0, 43));
  s.occlusions.push_back({3, 100, 119});
  const ClipRun run = SimulateWriteAnalyze(s, dir.path());
  ExpectGoodRun(run);
  for (const TrackPoint& p : run.analysis.tracking.points) {
    if (p.marker == 3) EXPECT_TRUE(p.frame < 100 || p.frame > 119);
  }
}

TEST(Pipeline, TwoGlintsPerFrame) {
  testing::TempDir dir("pipeline_glints");
  Scenario s = ClipScenario(testing::PlanarSpinScenario(0.0, 44));
  s.glints_per_frame = 2;
  ExpectGoodRun(SimulateWriteAnalyze(s, dir.path()));
}

TEST(Pipeline, ImageSequenceWithAMissingFrameIsReported) {
  testing::TempDir dir("pipeline_images");
  Scenario s = ClipScenario(testing::PlanarSpinScenario(0.0, 45));
  s.video.image_folder = true;
  const ClipRun run = SimulateWriteAnalyze(s, dir.path(), [](const std::filesystem::path& d) {
    std::filesystem::remove(d / "frames" / "frame_000137.png");
  });
  ExpectGoodRun(run, 0.1);  // lossless frames
  const auto& missing = run.analysis.tracking.cameras.at(0).clip.missing_frames;
  ASSERT_EQ(missing, std::vector<int>{137});
  bool warned = false;
  for (const std::string& w : run.analysis.fit.warnings) warned |= w.find("137") != std::string::npos;
  EXPECT_TRUE(warned);
}

TEST(Pipeline, ClipWithoutMarkersIsRefused) {
  testing::TempDir dir("pipeline_nomarkers");
  Scenario s = ClipScenario(testing::PlanarSpinScenario(0.0, 46));
  s.video.dot_level = s.video.body_level;  // the dots do not show
  s.frames = 60;
  const Simulation sim = SimulateFlight(s);
  WriteSimulation(sim, dir.path(), {});
  const Session session = ReadSessionYaml(dir.path() / "session.yaml");
  EXPECT_THROW(TrackClip(session, TrackingOptions{}, {}), DataError);
}

TEST(Pipeline, MissingImageFolderIsBadInput) {
  testing::TempDir dir("pipeline_nofolder");
  Scenario s = ClipScenario(testing::PlanarSpinScenario(0.0, 47));
  s.video.image_folder = true;
  s.frames = 20;
  WriteSimulation(SimulateFlight(s), dir.path(), {});
  std::filesystem::remove_all(dir.path() / "frames");
  const Session session = ReadSessionYaml(dir.path() / "session.yaml");
  EXPECT_THROW(TrackClip(session, TrackingOptions{}, {}), InputError);
}

TEST(Pipeline, TruncatedVideoIsBadInput) {
  testing::TempDir dir("pipeline_truncated");
  Scenario s = ClipScenario(testing::PlanarSpinScenario(0.0, 48));
  s.frames = 120;
  WriteSimulation(SimulateFlight(s), dir.path(), {});
  const std::filesystem::path clip = dir.path() / "clip.mp4";
  std::filesystem::resize_file(clip, std::filesystem::file_size(clip) * 6 / 10);
  const Session session = ReadSessionYaml(dir.path() / "session.yaml");
  EXPECT_THROW(TrackClip(session, TrackingOptions{}, {}), InputError);
}

TEST(Pipeline, PlaybackRateAsCaptureRateIsWarned) {
  testing::TempDir dir("pipeline_rate");
  Scenario s = ClipScenario(testing::PlanarSpinScenario(0.0, 49));
  s.frames = 80;
  WriteSimulation(SimulateFlight(s), dir.path(), {});
  Session session = ReadSessionYaml(dir.path() / "session.yaml");
  session.cameras[0].capture_fps = 30;  // the file's playback rate, taken for the capture rate
  const TrackingResult tracking = TrackClip(session, TrackingOptions{}, {});
  bool warned = false;
  for (const std::string& w : tracking.warnings) warned |= w.find("capture") != std::string::npos;
  EXPECT_TRUE(warned);
}

}  // namespace
}  // namespace tumbletrace
