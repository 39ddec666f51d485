// Scenario files: one camera or a list of several, and the messages of bad ones.
#include "tumbletrace/sim/scenario.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <functional>

#include "support/scenarios.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

constexpr const char* kRest =
    "capture_fps: 1000\n"
    "frames: 50\n"
    "launch: {position_m: [-0.4, 0, -0.15], velocity_mps: [3, 0, 2.5]}\n"
    "spin: {omega_body_radps: [0, 0, 31.4]}\n";

constexpr const char* kTwoCameras =
    "cameras:\n"
    "  - {name: front, camera: front.yaml}\n"
    "  - {name: side, camera: side.yaml, time_offset_s: 0.0004}\n";

// A fresh folder per test with a body (with parts), two posed cameras and one without a
// pose; removed afterwards.
class ScenarioFileTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() / ("tumbletrace_scenario_" + std::string(info->name()) +
                                           "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_);
    WriteBodyYaml(testing::HammerBody(), folder_ / "body.yaml");
    WriteCameraYaml(testing::FacingCamera(), folder_ / "front.yaml");
    WriteCameraYaml(testing::SecondObliqueCamera(), folder_ / "side.yaml");
    Camera unposed = testing::FacingCamera();
    unposed.camera_from_world.reset();
    WriteCameraYaml(unposed, folder_ / "unposed.yaml");
  }
  void TearDown() override { fs::remove_all(folder_); }

  fs::path Write(const std::string& cameras) const {
    const fs::path path = folder_ / "scenario.yaml";
    std::ofstream(path) << "body: body.yaml\n" << cameras << kRest;
    return path;
  }
  // The message of reading a scenario with these camera lines, the folder taken off.
  std::string ErrorReading(const std::string& cameras) const {
    const fs::path path = Write(cameras);
    std::string message = "(no InputError thrown)";
    try {
      ReadScenarioYaml(path);
    } catch (const InputError& error) {
      message = error.what();
    }
    const std::string prefix = (folder_ / "").string();
    if (message.rfind(prefix, 0) == 0) message.erase(0, prefix.size());
    return message;
  }

  fs::path folder_;
};

TEST_F(ScenarioFileTest, OneCameraFilmsAsTheCameraOnTheWorldClock) {
  const Scenario s = ReadScenarioYaml(Write("camera: front.yaml\n"));
  EXPECT_TRUE(s.cameras.empty());
  const std::vector<ScenarioCamera> filming = s.FilmingCameras();
  ASSERT_EQ(filming.size(), 1u);
  EXPECT_EQ(filming[0].name, "camera");
  EXPECT_EQ(filming[0].camera_file, folder_ / "front.yaml");
  EXPECT_EQ(filming[0].time_offset_s, 0.0);
  EXPECT_EQ(filming[0].camera.camera_from_world->translation_m, Eigen::Vector3d(0, 0, 3));
}

TEST_F(ScenarioFileTest, ReadsEveryCameraOfAListWithItsTrueClockOffset) {
  const Scenario s = ReadScenarioYaml(Write(kTwoCameras));
  const std::vector<ScenarioCamera> filming = s.FilmingCameras();
  ASSERT_EQ(filming.size(), 2u);
  EXPECT_EQ(filming[0].name, "front");
  EXPECT_EQ(filming[0].time_offset_s, 0.0);
  EXPECT_EQ(filming[1].name, "side");
  EXPECT_EQ(filming[1].camera_file, folder_ / "side.yaml");
  EXPECT_EQ(filming[1].time_offset_s, 0.0004);
  EXPECT_EQ(filming[1].camera.intrinsics.distortion,
            testing::SecondObliqueCamera().intrinsics.distortion);
  EXPECT_NEAR((filming[1].camera.camera_from_world->translation_m -
               testing::SecondObliqueCamera().camera_from_world->translation_m)
                  .norm(),
              0.0, 1e-9);
}

TEST_F(ScenarioFileTest, ReadsTheAirTheHandAndTheImpact) {
  const Scenario s = ReadScenarioYaml(Write(
      "camera: front.yaml\n"
      "aero: {k_per_m: 0.02, k_lift: 0.001, wind_mps: [1, 0, 0]}\n"
      "hand: {release_time_s: 0.01, acceleration_mps2: [100, 0, 50], "
      "angular_acceleration_radps2: [0, 0, -300]}\n"
      "impact: {time_s: 0.04, normal: [-2, 0, 0], restitution: 0.4, spin_kept: 0.5}\n"));
  EXPECT_EQ(s.aero.k_per_m, 0.02);
  EXPECT_EQ(s.aero.k_lift, 0.001);
  EXPECT_EQ(s.aero.wind_world_mps, Eigen::Vector3d(1, 0, 0));
  ASSERT_TRUE(s.hand && s.impact);
  EXPECT_EQ(s.LaunchTimeS(), 0.01);
  EXPECT_EQ(s.hand->angular_acceleration_body_radps2, Eigen::Vector3d(0, 0, -300));
  EXPECT_EQ(s.impact->normal_world, Eigen::Vector3d(-1, 0, 0));
  EXPECT_EQ(s.impact->restitution, 0.4);
}

TEST_F(ScenarioFileTest, RendersFlatUnlessToldAndReadsTheRayCastersKeys) {
  const Scenario plain = ReadScenarioYaml(Write("camera: front.yaml\n"));
  EXPECT_EQ(plain.render.mode, RenderMode::kFlat);
  const Scenario s = ReadScenarioYaml(Write(
      "camera: front.yaml\n"
      "render: {mode: raycast, marker_kind: retro, occlusion: false, shadows: false}\n"
      "light: {towards_light_world: [0, 0, 2], ambient: 0.3, diffuse: 0.6, specular: 0.2, "
      "shininess: 25}\n"));
  EXPECT_EQ(s.render.mode, RenderMode::kRaycast);
  EXPECT_EQ(s.render.marker_kind, MarkerMaterial::kRetro);
  EXPECT_FALSE(s.render.occlusion);
  EXPECT_FALSE(s.render.shadows);
  EXPECT_EQ(s.light.towards_light_world, Eigen::Vector3d(0, 0, 1));
  EXPECT_EQ(s.light.ambient, 0.3);
  EXPECT_EQ(s.light.diffuse, 0.6);
  EXPECT_EQ(s.light.specular, 0.2);
  EXPECT_EQ(s.light.shininess, 25);
  const Scenario defaults = ReadScenarioYaml(Write("camera: front.yaml\nrender: {mode: raycast}\n"));
  EXPECT_EQ(defaults.render.marker_kind, MarkerMaterial::kGlossy);
  EXPECT_TRUE(defaults.render.occlusion && defaults.render.shadows);
}

TEST(ScenarioFile, TheLitDemoTumbleIsRayCast) {
  const Scenario s = ReadScenarioYaml(fs::path(TUMBLETRACE_SOURCE_DIR) / "data-demo" / "tumble" /
                                      "scenario_lit.yaml");
  EXPECT_EQ(s.render.mode, RenderMode::kRaycast);
  EXPECT_EQ(s.render.marker_kind, MarkerMaterial::kGlossy);
  EXPECT_EQ(s.video.body_level, 90.0);
  EXPECT_NEAR(s.light.towards_light_world.norm(), 1.0, 1e-12);
}

TEST_F(ScenarioFileTest, BadRenderAndLightKeysAreNamed) {
  EXPECT_EQ(ErrorReading("camera: front.yaml\nrender: {mode: photoreal}\n"),
            "scenario.yaml:3: key 'render.mode': expected flat or raycast, got 'photoreal'");
  EXPECT_EQ(ErrorReading("camera: front.yaml\nrender: {marker_kind: chrome}\n"),
            "scenario.yaml:3: key 'render.marker_kind': expected sphere, flat or retro, got 'chrome'");
  EXPECT_NE(ErrorReading("camera: front.yaml\nrender: {shadow: false}\n").find("unknown key 'shadow'"),
            std::string::npos);
  EXPECT_EQ(ErrorReading("camera: front.yaml\nlight: {towards_light_world: [0, 0, 0]}\n"),
            "scenario.yaml:3: key 'light.towards_light_world': expected a non-zero direction, got "
            "'[0, 0, 0]'");
  EXPECT_EQ(ErrorReading("camera: front.yaml\nlight: {ambient: -0.1}\n"),
            "scenario.yaml:3: key 'light.ambient': expected a fraction of the level, >= 0, got '-0.1'");
  EXPECT_EQ(ErrorReading("camera: front.yaml\nlight: {shininess: 0}\n"),
            "scenario.yaml:3: key 'light.shininess': expected a highlight exponent > 0, got '0'");
}

TEST_F(ScenarioFileTest, DragCoefficientNeedsTheBodysReferenceArea) {
  EXPECT_NE(ErrorReading("camera: front.yaml\naero: {cd: 0.47}\n").find("aero_reference"),
            std::string::npos);
  EXPECT_NE(ErrorReading("camera: front.yaml\naero: {k_per_m: 0.01, cd: 0.47}\n")
                .find("exactly one of k_per_m and cd"),
            std::string::npos);
  EXPECT_NE(ErrorReading("camera: front.yaml\nhand: {release_time_s: 0.03, acceleration_mps2: "
                         "[0, 0, 0]}\nimpact: {time_s: 0.02}\n")
                .find("an impact after the release"),
            std::string::npos);
}

TEST_F(ScenarioFileTest, BadCameraListsAreNamed) {
  EXPECT_EQ(ErrorReading(std::string("camera: front.yaml\n") + kTwoCameras)
                .rfind("scenario.yaml:4: key 'cameras': expected either camera or a cameras list, "
                       "not both (this file has both), got ",
                       0),
            0u)
      << ErrorReading(std::string("camera: front.yaml\n") + kTwoCameras);
  EXPECT_EQ(ErrorReading("cameras:\n  - {name: front, camera: front.yaml}\n"
                         "  - {name: front, camera: side.yaml}\n"),
            "scenario.yaml:4: key 'cameras[1].name': expected a name no other camera has, got "
            "'front'");
  EXPECT_EQ(ErrorReading("cameras:\n  - {name: front view, camera: front.yaml}\n"),
            "scenario.yaml:3: key 'cameras[0].name': expected a name of letters, digits, '-' and "
            "'_' (it names the camera's files), got 'front view'");
  EXPECT_EQ(ErrorReading("cameras:\n  - {name: front, camera: unposed.yaml}\n"),
            "scenario.yaml:3: key 'cameras[0].camera': expected a camera file with "
            "world_to_camera (the simulator needs a pose), got 'unposed.yaml'");
  EXPECT_EQ(ErrorReading("cameras:\n  - {name: front, camera: front.yaml, offset: 1}\n"),
            "scenario.yaml:3: unknown key 'offset' in 'cameras[0]'; allowed: camera, name, "
            "time_offset_s");
  EXPECT_EQ(ErrorReading("cameras: []\n"),
            "scenario.yaml:2: key 'cameras': expected a list of at least one camera {name, "
            "camera}, got '[]'");
}

}  // namespace
}  // namespace tumbletrace
