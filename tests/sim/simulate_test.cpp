#include "tumbletrace/sim/simulate.hpp"

#include <gtest/gtest.h>

#include <fstream>
#include <nlohmann/json.hpp>

#include <opencv2/calib3d.hpp>
#include <sstream>

#include "support/scenarios.hpp"
#include "support/temp_dir.hpp"
#include "support/tumble_scenarios.hpp"
#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/detect/marker_detector.hpp"
#include "tumbletrace/model/session.hpp"

namespace tumbletrace {
namespace {

TEST(Simulate, TracksAreTheTruthPlusTheStatedNoise) {
  const Scenario s = testing::PlanarSpinScenario(0.5, 5);
  const Simulation sim = SimulateFlight(s);
  ASSERT_EQ(sim.frames.size(), 250u);
  ASSERT_EQ(sim.tracks.size(), 250u * 6u);  // every dot faces the camera throughout
  double sum_sq = 0;
  for (const TrackPoint& p : sim.tracks) {
    const MarkerTruth& t = sim.frames[p.frame].markers[*p.marker - 1];
    sum_sq += (Eigen::Vector2d(p.x_px, p.y_px) - t.pixel).squaredNorm();
  }
  EXPECT_NEAR(std::sqrt(sum_sq / (2.0 * sim.tracks.size())), 0.5, 0.03);
}

TEST(Simulate, DotsTurnedAwayFromTheCameraAreNotTracked) {
  Scenario s = testing::PlanarSpinScenario(0.0);
  // Spin about the handle: the marked face turns away half of the time.
  s.launch_omega_body_radps = Eigen::Vector3d(2 * M_PI * 4.0, 0, 0);
  const Simulation sim = SimulateFlight(s);
  EXPECT_LT(sim.tracks.size(), 250u * 6u * 3 / 4);
  EXPECT_GT(sim.tracks.size(), 250u * 6u / 4);
}

// The wobbling paddle with balls for markers (half sunk in its faces, four on each side).
Scenario PaddleWithBalls(RenderMode mode) {
  Scenario s = testing::WobbleScenario(0.0, 3);
  for (Marker& m : s.body.markers) m.normal_body.reset();
  s.frames = 120;
  s.render.mode = mode;
  return s;
}

TEST(Simulate, MarkersTheRayCastBodyHidesWhollyAreNotTracked) {
  const Simulation flat = SimulateFlight(PaddleWithBalls(RenderMode::kFlat));
  const Simulation cast = SimulateFlight(PaddleWithBalls(RenderMode::kRaycast));
  // Balls are seen from every side in the flat clip; the board hides those on its far face.
  EXPECT_EQ(flat.tracks.size(), 120u * 8u);
  EXPECT_LT(cast.tracks.size(), 120u * 6u);
  EXPECT_GT(cast.tracks.size(), 120u * 3u);
  for (const TrackPoint& p : cast.tracks) {
    const MarkerTruth& t = cast.frames[p.frame].markers[*p.marker - 1];
    EXPECT_GT(t.visible_fraction, 0.0);
  }
  int hidden = 0, partly = 0;
  for (const FrameTruth& f : cast.frames) {
    for (const MarkerTruth& t : f.markers) {
      hidden += t.in_front && t.visible_fraction == 0.0;
      partly += t.visible_fraction > 0.0 && t.visible_fraction < 0.99;  // the board's rim
    }
  }
  EXPECT_GT(hidden, 120 * 2);
  EXPECT_GT(partly, 120);
  // Without occlusion nothing is hidden: the flat clip's tracks.
  Scenario seen_through = PaddleWithBalls(RenderMode::kRaycast);
  seen_through.render.occlusion = false;
  EXPECT_EQ(SimulateFlight(seen_through).tracks.size(), flat.tracks.size());
}

TEST(Simulate, TruthPixelsAreOpenCVsProjection) {
  // The exact pixel of each marker against cv::projectPoints (OpenCV calib3d), lens and all.
  const Scenario s = testing::ObliqueSpinScenario(0.0, 2);
  const Simulation sim = SimulateFlight(s);
  const RigidTransform& cfw = *s.camera.camera_from_world;
  const CameraIntrinsics& k = s.camera.intrinsics;
  const cv::Matx33d camera_matrix(k.fx_px, 0, k.cx_px, 0, k.fy_px, k.cy_px, 0, 0, 1);
  const std::vector<double> distortion(k.distortion.begin(), k.distortion.end());
  int compared = 0;
  for (const FrameTruth& f : sim.frames) {
    for (const MarkerTruth& t : f.markers) {
      const Marker& m = *s.body.FindMarker(t.id);
      const Eigen::Vector3d x = cfw.Apply(f.state.cm_world_m + f.state.world_from_body * (m.at_body_m - sim.mass.cm_body_m));
      std::vector<cv::Point2d> projected;
      cv::projectPoints(std::vector<cv::Point3d>{{x.x(), x.y(), x.z()}}, cv::Vec3d(0, 0, 0),
                        cv::Vec3d(0, 0, 0), camera_matrix, distortion, projected);
      EXPECT_NEAR(t.pixel.x(), projected[0].x, 1e-9);
      EXPECT_NEAR(t.pixel.y(), projected[0].y, 1e-9);
      ++compared;
    }
  }
  EXPECT_EQ(compared, 250 * 6);
}

TEST(Simulate, WritesEachSightingsTruth) {
  Scenario s = PaddleWithBalls(RenderMode::kRaycast);
  s.frames = 20;
  s.file = "paddle.yaml";
  s.video.write = false;
  const Simulation sim = SimulateFlight(s);
  const testing::TempDir dir("sightings");
  WriteSimulation(sim, dir.path(), {});
  std::ifstream in(dir.path() / "truth_sightings.csv");
  std::string line;
  std::getline(in, line);
  EXPECT_EQ(line, "camera,frame,time_s,marker,x_px,y_px,visible_fraction,shadowed_fraction");
  int rows = 0;
  while (std::getline(in, line)) {
    std::stringstream row(line);
    std::string camera, field;
    std::getline(row, camera, ',');
    std::vector<double> values;
    while (std::getline(row, field, ',')) values.push_back(std::stod(field));
    ASSERT_EQ(values.size(), 7u);
    EXPECT_EQ(camera, "camera");
    const MarkerTruth& t = sim.frames.at(static_cast<int>(values[0])).markers.at(static_cast<int>(values[2]) - 1);
    EXPECT_NEAR(values[3], t.pixel.x(), 1e-6);
    EXPECT_NEAR(values[5], t.visible_fraction, 1e-4);
    EXPECT_NEAR(values[6], t.shadowed_fraction, 1e-4);
    ++rows;
  }
  EXPECT_EQ(rows, 20 * 8);  // every ball is in front of the camera
}

TEST(Simulate, RayCastClipShowsTheVisibleBallsBrighterThanTheBody) {
  Scenario s = PaddleWithBalls(RenderMode::kRaycast);
  s.image_sigma_levels = 0.0;
  const Simulation sim = SimulateFlight(s);
  const cv::Mat frame = RenderSimulatedFrame(sim, 30);
  for (const MarkerTruth& t : sim.frames[30].markers) {
    const std::uint8_t level = frame.at<std::uint8_t>(int(std::lround(t.pixel.y())), int(std::lround(t.pixel.x())));
    if (t.visible_fraction > 0.9) EXPECT_GT(level, s.video.body_level) << "marker " << t.id;
    if (t.visible_fraction == 0.0) EXPECT_LE(level, s.video.body_level) << "marker " << t.id;
  }
}

TEST(Simulate, StateAtMatchesTheFrames) {
  const Scenario s = testing::PlanarSpinScenario(0.0);
  const Simulation sim = SimulateFlight(s);
  const RigidState mid = StateAt(sim, sim.frames[100].time_s);
  EXPECT_LT((mid.cm_world_m - sim.frames[100].state.cm_world_m).norm(), 1e-12);
  const RigidState between = StateAt(sim, 0.1005);
  EXPECT_GT((between.cm_world_m - sim.frames[100].state.cm_world_m).norm(), 1e-4);
}

// ---- several cameras ---------------------------------------------------------------------

constexpr double kSideOffsetS = 0.0004;

// Each camera's truth is the projection of the body at its own exposure time: frame i of
// camera k at i / fps + offset_k. Checked against the state StateAt gives for that time.
TEST(Simulate, EachCameraSeesTheBodyAtItsOwnClock) {
  const Scenario s = testing::TwoCameraScenario(0.0, 3, kSideOffsetS);
  const Simulation sim = SimulateFlight(s);
  const std::vector<ScenarioCamera> cameras = s.FilmingCameras();
  ASSERT_EQ(cameras.size(), 2u);
  for (int frame : {0, 80, 249}) {
    const FrameTruth& f = sim.frames[frame];
    ASSERT_EQ(f.markers.size(), 2u * s.body.markers.size());
    for (const MarkerTruth& m : f.markers) {
      const ScenarioCamera& camera = cameras.at(m.camera);
      const RigidState state = StateAt(sim, f.time_s + camera.time_offset_s);
      const Marker& marker = *s.body.FindMarker(m.id);
      const Eigen::Vector3d world =
          state.cm_world_m + state.world_from_body * (marker.at_body_m - sim.mass.cm_body_m);
      const Eigen::Vector3d x_cam = camera.camera.camera_from_world->Apply(world);
      Eigen::Vector2d pixel;
      ASSERT_TRUE(ProjectCameraPoint(camera.camera.intrinsics, x_cam.data(), pixel.data()));
      EXPECT_LT((pixel - m.pixel).norm(), 1e-6) << "frame " << frame << " camera " << m.camera;
      EXPECT_TRUE(m.visible) << "frame " << frame << " camera " << m.camera << " marker " << m.id;
    }
    // The views differ: markers land pixels apart in the two images (not just by the offset).
    double farthest_px = 0.0;
    for (size_t i = 0; i < s.body.markers.size(); ++i) {
      farthest_px = std::max(
          farthest_px, (f.markers[i].pixel - f.markers[i + s.body.markers.size()].pixel).norm());
    }
    EXPECT_GT(farthest_px, 5.0) << "frame " << frame;
  }
  // Every marker in every frame of both cameras, each point with its camera.
  ASSERT_EQ(sim.tracks.size(), 2u * 250u * 6u);
  int of_side = 0;
  for (const TrackPoint& p : sim.tracks) of_side += p.camera == 1;
  EXPECT_EQ(of_side, 250 * 6);
}

// simulate's files for two cameras: one camera file each, a list-form session without the
// offsets (the fit's to find), tracks with the camera column, the offsets in truth.json.
TEST(Simulate, TwoCamerasWriteTheirFilesAndAListSession) {
  testing::TempDir dir("simulate_files");
  Scenario s = testing::TwoCameraScenario(0.0, 4, kSideOffsetS);
  s.frames = 10;
  WriteSimulation(SimulateFlight(s), dir.path(), {});
  const Session session = ReadSessionYaml(dir.path() / "session.yaml");
  ASSERT_EQ(session.cameras.size(), 2u);
  EXPECT_EQ(session.cameras[0].name, "front");
  EXPECT_EQ(session.cameras[1].name, "side");
  EXPECT_EQ(session.cameras[1].clip.filename(), "side.mp4");
  EXPECT_EQ(session.cameras[1].camera_file.filename(), "side_camera.yaml");
  EXPECT_EQ(session.cameras[1].time_offset_s, 0.0);
  EXPECT_EQ(session.cameras[1].capture_fps, s.capture_fps);
  EXPECT_EQ(session.cameras[1].camera.intrinsics.distortion,
            testing::SecondObliqueCamera().intrinsics.distortion);
  EXPECT_FALSE(std::filesystem::exists(dir.path() / "camera.yaml"));

  const std::vector<TrackPoint> tracks = ReadTracksCsv(dir.path() / "tracks.csv");
  ASSERT_EQ(tracks.size(), 2u * 10u * 6u);
  EXPECT_EQ(tracks.back().camera, 1);

  std::ifstream in(dir.path() / "truth.json");
  const nlohmann::json truth = nlohmann::json::parse(in);
  ASSERT_EQ(truth.at("cameras").size(), 2u);
  EXPECT_EQ(truth["cameras"][1]["name"], "side");
  EXPECT_EQ(truth["cameras"][1]["time_offset_s"].get<double>(), kSideOffsetS);
  EXPECT_EQ(truth["cameras"][1]["time_offset_from_first_s"].get<double>(), kSideOffsetS);
  const nlohmann::json& marker = truth["frames"][3]["markers"][6];
  EXPECT_EQ(marker["camera"], 1);
  EXPECT_EQ(marker["id"], 1);
}

// The clips as the pipeline reads them: in each camera's clip (H.264) the detected dots lie
// at that camera's truth pixels, at its own exposure time.
TEST(Simulate, EachCamerasClipShowsItsOwnDotsAtTheirTruePixels) {
  testing::TempDir dir("simulate_clips");
  Scenario s = testing::TwoCameraScenario(0.0, 6, kSideOffsetS);
  for (ScenarioCamera& c : s.cameras) c.camera = testing::CentralWindow(c.camera, 640, 480);
  s.frames = 8;
  s.video.write = true;
  s.video.supersampling = 2;
  const Simulation sim = SimulateFlight(s);
  WriteSimulation(sim, dir.path(), {});
  const Session session = ReadSessionYaml(dir.path() / "session.yaml");
  for (int k = 0; k < 2; ++k) {
    std::unique_ptr<FrameSource> clip = OpenClip(session.cameras[k].clip);
    MarkerDetector detector(DetectorOptions{});
    Frame frame;
    int frames = 0;
    double sum_sq = 0.0, worst = 0.0;
    int n = 0;
    while (clip->Next(&frame)) {
      ++frames;
      EXPECT_EQ(frame.image.cols, 640);
      const std::vector<Detection> detections = detector.Detect(frame.image);
      for (const MarkerTruth& m : sim.frames.at(frame.index).markers) {
        if (m.camera != k) continue;
        ASSERT_TRUE(m.visible);
        double nearest = 1e9;
        for (const Detection& d : detections) {
          nearest = std::min(nearest, (d.center_px - m.pixel).norm());
        }
        sum_sq += nearest * nearest;
        worst = std::max(worst, nearest);
        ++n;
      }
    }
    EXPECT_EQ(frames, 8) << session.cameras[k].name;
    ASSERT_EQ(n, 8 * 6);
    // H.264 moves centroids by about 0.09 px rms (docs/scenario.md); a clock or a camera
    // mixed up moves them by pixels.
    EXPECT_LT(std::sqrt(sum_sq / n), 0.2) << session.cameras[k].name;
    EXPECT_LT(worst, 0.5) << session.cameras[k].name;
  }
}

}  // namespace
}  // namespace tumbletrace
