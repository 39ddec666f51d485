#include "tumbletrace/model/session.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <functional>
#include <sstream>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

std::string InputErrorOf(const std::function<void()>& action) {
  try {
    action();
  } catch (const InputError& error) {
    return error.what();
  }
  return "(no InputError thrown)";
}

// WGS 84 normal gravity on the ellipsoid, m/s^2 (NIMA TR8350.2, 3rd ed., its
// table of normal gravity).
TEST(NormalGravityTest, Wgs84ValuesOnTheEllipsoid) {
  EXPECT_NEAR(NormalGravityWgs84(0.0, 0.0), 9.7803253359, 1e-9);
  EXPECT_NEAR(NormalGravityWgs84(45.0, 0.0), 9.8061977694, 1e-9);
  EXPECT_NEAR(NormalGravityWgs84(90.0, 0.0), 9.8321849379, 1e-9);
  EXPECT_NEAR(NormalGravityWgs84(-90.0, 0.0), 9.8321849379, 1e-9);
}

// The height term against the common free-air gradient, about 0.3086 mGal/m
// (3.086e-6 s^-2), a figure independent of the formula's constants.
TEST(NormalGravityTest, DecreasesWithHeightAtTheFreeAirGradient) {
  for (double latitude_deg : {0.0, 30.0, 45.0, 60.0, 90.0}) {
    const double gradient =
        (NormalGravityWgs84(latitude_deg, 0.0) - NormalGravityWgs84(latitude_deg, 1000.0)) / 1000.0;
    EXPECT_NEAR(gradient, 3.086e-6, 0.01e-6) << latitude_deg << " deg";
  }
}

TEST(GravitySpecTest, WorldVectorAndMagnitude) {
  GravitySpec vector;
  vector.vector_mps2 = Eigen::Vector3d(0, -9.81, 0);
  EXPECT_EQ(vector.WorldVector(), Eigen::Vector3d(0, -9.81, 0));
  EXPECT_DOUBLE_EQ(vector.Magnitude(), 9.81);

  GravitySpec magnitude;
  magnitude.magnitude_mps2 = 9.79;
  EXPECT_FALSE(magnitude.WorldVector().has_value());
  EXPECT_EQ(magnitude.Magnitude(), 9.79);

  GravitySpec place;
  place.latitude_deg = 45.0;
  place.elevation_m = 0.0;
  ASSERT_TRUE(place.WorldVector().has_value());
  EXPECT_NEAR(place.WorldVector()->z(), -9.8061977694, 1e-9);
  EXPECT_EQ(place.WorldVector()->head<2>(), Eigen::Vector2d::Zero());
  EXPECT_NEAR(place.Magnitude(), 9.8061977694, 1e-9);
}

// A fresh folder per test, with a camera and a body file in it; removed afterwards.
class SessionFileTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() /
              ("tumbletrace_session_" + std::string(info->name()) + "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_ / "cal");
    WriteText("cal/camera.yaml",
              "image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
              "distortion: [0, 0, 0, 0, 0]\n");
    WriteText("body.yaml",
              "units: mm\nmarkers: [{id: 1, at: [0, 0, 0]}, {id: 2, at: [10, 0, 0]}]\n");
  }
  void TearDown() override { fs::remove_all(folder_); }

  fs::path WriteText(const std::string& name, const std::string& text) const {
    const fs::path path = folder_ / name;
    std::ofstream(path) << text;
    return path;
  }
  fs::path WriteSession(const std::string& extra) const {
    return WriteText("session.yaml",
                     "clip: clip.mp4\ncapture_fps: 1000\ncamera: cal/camera.yaml\n"
                     "body: body.yaml\n" +
                         extra);
  }
  // The message of reading a session with `extra` lines, with the folder taken off the path.
  std::string ErrorReading(const std::string& extra) const {
    return ErrorReadingText(
        "clip: clip.mp4\ncapture_fps: 1000\ncamera: cal/camera.yaml\nbody: body.yaml\n" + extra);
  }
  // The same for a session file of the given text.
  std::string ErrorReadingText(const std::string& text) const {
    const fs::path path = WriteText("session.yaml", text);
    std::string message = InputErrorOf([&] { ReadSessionYaml(path); });
    const std::string prefix = (folder_ / "").string();
    if (message.rfind(prefix, 0) == 0) message.erase(0, prefix.size());
    return message;
  }
  static std::string Contents(const fs::path& path) {
    std::ifstream in(path);
    std::ostringstream text;
    text << in.rdbuf();
    return text.str();
  }

  fs::path folder_;
};

// A full-frame calibration and a clip recorded with a cropped read-out: the session gives
// the window.
TEST_F(SessionFileTest, SessionSensorWindowCropsTheFullFrameCalibration) {
  const Session session =
      ReadSessionYaml(WriteSession("sensor_window: {offset_px: [192, 128], size_px: [640, 512]}\n"));
  const CameraIntrinsics& k = session.cameras[0].camera.intrinsics;
  EXPECT_EQ(k.width_px, 640);
  EXPECT_EQ(k.height_px, 512);
  EXPECT_EQ(k.cx_px, 512.0 - 192);
  EXPECT_EQ(k.cy_px, 384.0 - 128);
  // Written back and read again: the same window.
  WriteSessionYaml(session, folder_ / "again.yaml");
  const Session again = ReadSessionYaml(folder_ / "again.yaml");
  EXPECT_EQ(again.cameras[0].camera.intrinsics.cx_px, k.cx_px);
  EXPECT_EQ(again.cameras[0].camera.intrinsics.width_px, 640);
}

TEST_F(SessionFileTest, SessionSensorWindowOutsideTheFullFrameIsRefused) {
  const std::string message =
      ErrorReading("sensor_window: {offset_px: [512, 0], size_px: [640, 512]}\n");
  EXPECT_NE(message.find("session.yaml:5: key 'sensor_window': expected a window inside the "
                         "full frame image_size [1024, 768]"),
            std::string::npos)
      << message;
  EXPECT_NE(message.find("cal/camera.yaml"), std::string::npos) << message;
}

TEST_F(SessionFileTest, ResolvesFilesBesideTheSession) {
  const Session session = ReadSessionYaml(WriteSession(""));
  EXPECT_EQ(session.file, folder_ / "session.yaml");
  ASSERT_EQ(session.cameras.size(), 1u);
  const SessionCamera& camera = session.cameras[0];
  EXPECT_EQ(camera.name, "camera");
  EXPECT_EQ(camera.clip, folder_ / "clip.mp4");
  EXPECT_EQ(camera.camera_file, folder_ / "cal" / "camera.yaml");
  EXPECT_EQ(session.body_file, folder_ / "body.yaml");
  EXPECT_EQ(session.capture_fps, 1000.0);
  EXPECT_EQ(camera.capture_fps, 1000.0);
  EXPECT_EQ(camera.time_offset_s, 0.0);
  EXPECT_FALSE(session.estimate_time_offsets);
  EXPECT_EQ(camera.camera.intrinsics.fx_px, 1400.0);
  EXPECT_EQ(session.body.markers.size(), 2u);
  // Neither gravity key: standard gravity along world -z.
  EXPECT_EQ(session.gravity.WorldVector(), Eigen::Vector3d(0, 0, -9.80665));
  EXPECT_EQ(session.markers.kind, MarkerKind::kBrightDots);
  EXPECT_FALSE(session.markers.threshold.has_value());
  EXPECT_FALSE(session.first_frame.has_value());
  EXPECT_FALSE(session.last_frame.has_value());
}

TEST_F(SessionFileTest, ReadsARelativeSessionPath) {
  // Runs from the folder above, and returns there whatever happens.
  struct WorkingFolder {
    explicit WorkingFolder(const fs::path& folder) : previous(fs::current_path()) {
      fs::current_path(folder);
    }
    ~WorkingFolder() { fs::current_path(previous); }
    fs::path previous;
  };
  WriteSession("");
  const WorkingFolder working_folder(folder_.parent_path());
  const Session session = ReadSessionYaml(folder_.filename() / "session.yaml");
  EXPECT_EQ(session.cameras.at(0).clip, folder_.filename() / "clip.mp4");
  EXPECT_EQ(session.body_file, folder_.filename() / "body.yaml");
  // Written back beside it, the names are again relative to the session file.
  WriteSessionYaml(session, folder_.filename() / "again.yaml");
  EXPECT_EQ(Contents(folder_ / "again.yaml").rfind("clip: clip.mp4\n", 0), 0u);
  const Session again = ReadSessionYaml(folder_.filename() / "again.yaml");
  EXPECT_EQ(again.cameras.at(0).clip, session.cameras.at(0).clip);
  EXPECT_EQ(again.cameras.at(0).camera_file, session.cameras.at(0).camera_file);
}

TEST_F(SessionFileTest, ReadsEveryOptionalSetting) {
  const Session session =
      ReadSessionYaml(WriteSession("gravity_mps2: [0, -9.81, 0]\n"
                                   "markers: {kind: dark-dots, threshold: 40, min_area_px: 5, "
                                   "max_area_px: 900, background_radius_px: 6}\n"
                                   "frames: {first: 100, last: 450}\n"));
  EXPECT_EQ(session.gravity.WorldVector(), Eigen::Vector3d(0, -9.81, 0));
  EXPECT_EQ(session.markers.kind, MarkerKind::kDarkDots);
  EXPECT_EQ(session.markers.threshold, 40.0);
  EXPECT_EQ(session.markers.min_area_px, 5.0);
  EXPECT_EQ(session.markers.max_area_px, 900.0);
  EXPECT_EQ(session.markers.background_radius_px, 6);
  EXPECT_EQ(session.first_frame, 100);
  EXPECT_EQ(session.last_frame, 450);
}

TEST_F(SessionFileTest, ReadsTheAirWindDragWindowAndGravityCheck) {
  const Session session = ReadSessionYaml(WriteSession(
      "air: {temperature_c: 20, pressure_pa: 101325, relative_humidity_percent: 50}\n"
      "wind_mps: [1.5, 0, 0]\n"
      "drag: quadratic+lift\n"
      "window: all\n"
      "estimate_gravity: true\n"));
  EXPECT_NEAR(session.air.Density(), AirDensityCipm2007(20, 101325, 0.5), 1e-12);
  EXPECT_EQ(session.wind_world_mps, Eigen::Vector3d(1.5, 0, 0));
  EXPECT_EQ(session.drag, "quadratic+lift");
  EXPECT_FALSE(session.search_window);
  EXPECT_TRUE(session.estimate_gravity);
  const Session plain = ReadSessionYaml(WriteSession(""));
  EXPECT_EQ(plain.drag, "auto");
  EXPECT_TRUE(plain.search_window);
  EXPECT_FALSE(plain.estimate_gravity);
  EXPECT_FALSE(plain.air.Stated());
}

TEST_F(SessionFileTest, BadAirAndDragAreNamed) {
  EXPECT_EQ(ErrorReading("drag: linear\n").rfind(
                "session.yaml:5: key 'drag': expected auto, none, quadratic or quadratic+lift, got 'linear'", 0),
            0u)
      << ErrorReading("drag: linear\n");
  EXPECT_NE(ErrorReading("air: {density_kgpm3: 1.2, temperature_c: 20}\n")
                .find("either density_kgpm3 or the conditions"),
            std::string::npos);
  EXPECT_NE(ErrorReading("air: {relative_humidity_percent: 120}\n").find("0 to 100 %"),
            std::string::npos);
  EXPECT_NE(ErrorReading("window: some\n").find("auto (find the free flight) or all"),
            std::string::npos);
}

TEST_F(SessionFileTest, GravityAsAMagnitude) {
  const Session session = ReadSessionYaml(WriteSession("gravity_mps2: 9.81\n"));
  EXPECT_FALSE(session.gravity.WorldVector().has_value());
  EXPECT_EQ(session.gravity.Magnitude(), 9.81);
}

TEST_F(SessionFileTest, GravityFromAPlace) {
  const Session session =
      ReadSessionYaml(WriteSession("gravity: {latitude_deg: 45, elevation_m: 1000}\n"));
  ASSERT_TRUE(session.gravity.WorldVector().has_value());
  EXPECT_EQ(session.gravity.WorldVector()->z(), -NormalGravityWgs84(45.0, 1000.0));
  const Session sea_level = ReadSessionYaml(WriteSession("gravity: {latitude_deg: 0}\n"));
  EXPECT_NEAR(sea_level.gravity.Magnitude(), 9.7803253359, 1e-9);
}

TEST_F(SessionFileTest, BothGravityFormsAreRefused) {
  EXPECT_EQ(ErrorReading("gravity_mps2: 9.81\ngravity: {latitude_deg: 45}\n"),
            "session.yaml:6: key 'gravity': expected only one of gravity_mps2 and gravity (this "
            "file has both), got '{latitude_deg: 45}'");
}

TEST_F(SessionFileTest, BadValuesAreNamed) {
  EXPECT_EQ(ErrorReading("gravity_mps2: [0, 0]\n"),
            "session.yaml:5: key 'gravity_mps2': expected a world-frame vector [x, y, z] in m/s^2, "
            "or a positive magnitude in m/s^2, got '[0, 0]'");
  EXPECT_EQ(ErrorReading("gravity: {latitude_deg: 95}\n"),
            "session.yaml:5: key 'gravity.latitude_deg': expected a latitude in degrees, -90 to "
            "90, got '95'");
  EXPECT_EQ(ErrorReading("markers: {kind: green-dots}\n"),
            "session.yaml:5: key 'markers.kind': expected bright-dots or dark-dots, got "
            "'green-dots'");
  EXPECT_EQ(ErrorReading("frames: {first: 10, last: 5}\n"),
            "session.yaml:5: key 'frames.last': expected a frame number not before frames.first, "
            "got '5'");
  EXPECT_EQ(ErrorReading("markers: {colour: red}\n"),
            "session.yaml:5: unknown key 'colour' in 'markers'; allowed: background_radius_px, "
            "centre_offset_px, kind, max_area_px, min_area_px, threshold");
  EXPECT_EQ(ErrorReading("markers: {centre_offset_px: -1}\n"),
            "session.yaml:5: key 'markers.centre_offset_px': expected a centre offset in pixels, 0 "
            "to 5, got '-1'");
  EXPECT_EQ(ErrorReading("markers: {background_radius_px: 0}\n"),
            "session.yaml:5: key 'markers.background_radius_px': expected a radius in whole "
            "pixels, 1 to 50, wider than a dot's radius, got '0'");
}

TEST_F(SessionFileTest, CaptureRateMustBePositive) {
  WriteText("session.yaml",
            "clip: clip.mp4\ncapture_fps: 0\ncamera: cal/camera.yaml\nbody: body.yaml\n");
  const std::string message = InputErrorOf([&] { ReadSessionYaml(folder_ / "session.yaml"); });
  EXPECT_EQ(message, (folder_ / "session.yaml").string() +
                         ":2: key 'capture_fps': expected a positive capture rate in frames per "
                         "second, got '0'");
}

TEST_F(SessionFileTest, ErrorsInNamedFilesNameThoseFiles) {
  WriteText("body.yaml", "units: cm\nmarkers: [{id: 1, at: [0, 0, 0]}]\n");
  EXPECT_EQ(ErrorReading(""), "body.yaml:1: key 'units': expected 'mm' or 'm', got 'cm'");
  fs::remove(folder_ / "cal" / "camera.yaml");
  EXPECT_EQ(ErrorReading(""), "cal/camera.yaml: file not found");
}

TEST_F(SessionFileTest, WriteThenReadKeepsRelativeNames) {
  Session session = ReadSessionYaml(
      WriteSession("gravity: {latitude_deg: 47.5, elevation_m: 430}\n"
                   "markers: {kind: dark-dots, threshold: 25}\nframes: {first: 3}\n"));
  const fs::path copy = folder_ / "copy.yaml";
  WriteSessionYaml(session, copy);
  const std::string text = Contents(copy);
  EXPECT_NE(text.find("clip: clip.mp4\n"), std::string::npos) << text;
  EXPECT_NE(text.find("camera: cal/camera.yaml\n"), std::string::npos) << text;
  const Session back = ReadSessionYaml(copy);
  ASSERT_EQ(back.cameras.size(), 1u);
  EXPECT_EQ(back.cameras[0].clip, session.cameras[0].clip);
  EXPECT_EQ(back.cameras[0].camera_file, session.cameras[0].camera_file);
  EXPECT_EQ(back.body_file, session.body_file);
  EXPECT_EQ(back.capture_fps, session.capture_fps);
  EXPECT_EQ(back.gravity.latitude_deg, 47.5);
  EXPECT_EQ(back.gravity.elevation_m, 430.0);
  EXPECT_EQ(back.markers.kind, MarkerKind::kDarkDots);
  EXPECT_EQ(back.markers.threshold, 25.0);
  EXPECT_EQ(back.first_frame, 3);
  EXPECT_FALSE(back.last_frame.has_value());
}

TEST_F(SessionFileTest, WriteKeepsNamesGivenRelativeToTheSession) {
  // As a writer that puts the files beside the session gives them: bare names.
  Session session;
  session.capture_fps = 2000.0;
  session.cameras.push_back({"camera", "clip.mp4", 2000.0, "camera.yaml", Camera{}, 0.0});
  session.body_file = "body.yaml";
  session.gravity.magnitude_mps2 = 9.81;
  fs::create_directories(folder_ / "out");
  WriteSessionYaml(session, folder_ / "out" / "session.yaml");
  const std::string text = Contents(folder_ / "out" / "session.yaml");
  EXPECT_EQ(
      text,
      "clip: clip.mp4\ncapture_fps: 2000\ncamera: camera.yaml\nbody: body.yaml\n"
      "gravity_mps2: 9.81\nmarkers: {kind: bright-dots, min_area_px: 3, max_area_px: 2000}\n");
}

TEST_F(SessionFileTest, WriteKeepsAbsoluteNamesOutsideTheFolder) {
  Session session = ReadSessionYaml(WriteSession(""));
  fs::create_directories(folder_ / "elsewhere");
  WriteSessionYaml(session, folder_ / "elsewhere" / "session.yaml");
  const Session back = ReadSessionYaml(folder_ / "elsewhere" / "session.yaml");
  EXPECT_EQ(back.cameras.at(0).clip, session.cameras.at(0).clip);
  EXPECT_EQ(back.cameras.at(0).camera_file, session.cameras.at(0).camera_file);
  EXPECT_EQ(back.gravity.WorldVector(), Eigen::Vector3d(0, 0, -9.80665));
}

// ---- several cameras: the list form --------------------------------------------------------

constexpr const char* kListSession =
    "capture_fps: 2000\n"
    "cameras:\n"
    "  - {name: side, clip: side.mp4, camera: cal/camera.yaml}\n"
    "  - {name: top, clip: top/, camera: cal/top.yaml, capture_fps: 1000, time_offset_s: 0.0002}\n"
    "estimate_time_offsets: true\n"
    "body: body.yaml\n";

class SessionListTest : public SessionFileTest {
 protected:
  void SetUp() override {
    SessionFileTest::SetUp();
    WriteText("cal/top.yaml",
              "image_size: [640, 480]\nfx: 900\nfy: 900\ncx: 320\ncy: 240\n"
              "distortion: [-0.1, 0, 0, 0, 0]\n");
  }
  // The list-form session with `from` replaced by `to` in its text.
  std::string ListSessionWith(const std::string& from, const std::string& to) const {
    std::string text = kListSession;
    const size_t at = text.find(from);
    EXPECT_NE(at, std::string::npos) << from;
    if (at != std::string::npos) text.replace(at, from.size(), to);
    return text;
  }
};

TEST_F(SessionListTest, ReadsEveryCameraWithItsFileRateAndOffset) {
  const Session session = ReadSessionYaml(WriteText("session.yaml", kListSession));
  ASSERT_EQ(session.cameras.size(), 2u);
  const SessionCamera& side = session.cameras[0];
  const SessionCamera& top = session.cameras[1];
  EXPECT_EQ(side.name, "side");
  EXPECT_EQ(side.clip, folder_ / "side.mp4");
  EXPECT_EQ(side.camera_file, folder_ / "cal" / "camera.yaml");
  EXPECT_EQ(side.capture_fps, 2000.0);  // the session's default
  EXPECT_EQ(side.time_offset_s, 0.0);
  EXPECT_EQ(side.camera.intrinsics.fx_px, 1400.0);
  EXPECT_EQ(top.name, "top");
  EXPECT_EQ(top.clip, folder_ / "top/");
  EXPECT_EQ(top.camera_file, folder_ / "cal" / "top.yaml");
  EXPECT_EQ(top.capture_fps, 1000.0);
  EXPECT_EQ(top.time_offset_s, 0.0002);
  EXPECT_EQ(top.camera.intrinsics.fx_px, 900.0);
  EXPECT_EQ(session.capture_fps, 2000.0);
  EXPECT_TRUE(session.estimate_time_offsets);
  EXPECT_EQ(session.CaptureRates(), (std::vector<double>{2000.0, 1000.0}));
  EXPECT_EQ(session.TimeOffsets(), (std::vector<double>{0.0, 0.0002}));
  ASSERT_EQ(session.CameraModels().size(), 2u);
  EXPECT_EQ(session.CameraModels()[1].intrinsics.width_px, 640);
}

TEST_F(SessionListTest, EveryCameraMayGiveItsOwnRateWithoutADefault) {
  const Session session = ReadSessionYaml(WriteText(
      "session.yaml",
      "cameras:\n  - {name: a, clip: a.mp4, camera: cal/camera.yaml, capture_fps: 500}\n"
      "  - {name: b, clip: b.mp4, camera: cal/top.yaml, capture_fps: 750}\nbody: body.yaml\n"));
  EXPECT_EQ(session.CaptureRates(), (std::vector<double>{500.0, 750.0}));
  EXPECT_EQ(session.capture_fps, 500.0);  // the first camera's, as the default
  EXPECT_FALSE(session.estimate_time_offsets);
}

TEST_F(SessionListTest, WriteThenReadGivesTheSameCameras) {
  const Session session = ReadSessionYaml(WriteText("session.yaml", kListSession));
  WriteSessionYaml(session, folder_ / "copy.yaml");
  const std::string text = Contents(folder_ / "copy.yaml");
  EXPECT_EQ(text.rfind("capture_fps: 2000\ncameras:\n  - name: side\n    clip: side.mp4\n"
                       "    camera: cal/camera.yaml\n  - name: top\n    clip: top/\n"
                       "    camera: cal/top.yaml\n    capture_fps: 1000\n"
                       "    time_offset_s: 0.0002\nbody: body.yaml\n",
                       0),
            0u)
      << text;
  EXPECT_NE(text.find("estimate_time_offsets: true\n"), std::string::npos) << text;
  const Session back = ReadSessionYaml(folder_ / "copy.yaml");
  ASSERT_EQ(back.cameras.size(), 2u);
  for (size_t k = 0; k < 2; ++k) {
    EXPECT_EQ(back.cameras[k].name, session.cameras[k].name);
    EXPECT_EQ(back.cameras[k].clip, session.cameras[k].clip);
    EXPECT_EQ(back.cameras[k].camera_file, session.cameras[k].camera_file);
    EXPECT_EQ(back.cameras[k].capture_fps, session.cameras[k].capture_fps);
    EXPECT_EQ(back.cameras[k].time_offset_s, session.cameras[k].time_offset_s);
  }
  EXPECT_EQ(back.capture_fps, session.capture_fps);
  EXPECT_TRUE(back.estimate_time_offsets);
}

TEST_F(SessionListTest, OneCameraTheSingleFormCannotSayIsWrittenAsAList) {
  Session session = ReadSessionYaml(WriteSession(""));
  session.cameras[0].time_offset_s = -0.0001;
  WriteSessionYaml(session, folder_ / "offset.yaml");
  const Session offset = ReadSessionYaml(folder_ / "offset.yaml");
  ASSERT_EQ(offset.cameras.size(), 1u);
  EXPECT_EQ(offset.cameras[0].time_offset_s, -0.0001);
  EXPECT_EQ(offset.cameras[0].name, "camera");

  session.cameras[0].time_offset_s = 0.0;
  session.cameras[0].name = "high";
  WriteSessionYaml(session, folder_ / "named.yaml");
  EXPECT_NE(Contents(folder_ / "named.yaml").find("cameras:\n  - name: high\n"), std::string::npos);
  EXPECT_EQ(ReadSessionYaml(folder_ / "named.yaml").cameras.at(0).name, "high");

  session.cameras[0].name = "camera";  // as read: the single form again
  WriteSessionYaml(session, folder_ / "single.yaml");
  EXPECT_EQ(Contents(folder_ / "single.yaml").rfind("clip: clip.mp4\n", 0), 0u);
}

TEST_F(SessionListTest, BothFormsOrNeitherAreRefused) {
  const std::string both = ErrorReadingText(std::string("clip: clip.mp4\n") + kListSession);
  EXPECT_EQ(both.rfind("session.yaml:4: key 'cameras': expected either a cameras list or clip "
                       "and camera at the top level, not both (this file has both), got ",
                       0),
            0u)
      << both;
  EXPECT_EQ(ErrorReadingText("capture_fps: 1000\nbody: body.yaml\n"),
            "session.yaml:1: key 'clip' is missing; expected a video file or a folder of numbered "
            "images, relative to this file, with camera: a camera file (or a cameras list of "
            "{name, clip, camera})");
}

TEST_F(SessionListTest, BadCamerasAreNamedByTheirPlaceInTheList) {
  struct Case {
    std::string from, to;  // the change to the list-form session
    std::string message;
  };
  const std::vector<Case> cases = {
      {"name: top", "name: side",
       "session.yaml:4: key 'cameras[1].name': expected a name no other camera of this session "
       "has, got 'side'"},
      {"name: top", "name: ''",
       "session.yaml:4: key 'cameras[1].name': expected a non-empty name for the camera, got ''"},
      {"camera: cal/camera.yaml}", "camera: cal/camera.yaml, fps: 3}",
       "session.yaml:3: unknown key 'fps' in 'cameras[0]'; allowed: camera, capture_fps, clip, "
       "name, sensor_window, time_offset_s"},
      {"capture_fps: 1000,", "capture_fps: -5,",
       "session.yaml:4: key 'cameras[1].capture_fps': expected a positive capture rate in frames "
       "per second, got '-5'"},
      {"time_offset_s: 0.0002", "time_offset_s: soon",
       "session.yaml:4: key 'cameras[1].time_offset_s': expected the camera's clock offset in s "
       "(its frame i is at i / capture_fps + time_offset_s), got 'soon'"},
      {", clip: side.mp4", "",
       "session.yaml:3: key 'cameras[0].clip' is missing; expected a video file or a folder of "
       "numbered images, relative to this file"},
      {"capture_fps: 2000\n", "",
       "session.yaml:2: key 'cameras[0].capture_fps' is missing; expected the camera's capture "
       "rate in frames per second (or capture_fps at the top level for every camera)"},
  };
  for (const Case& c : cases) {
    EXPECT_EQ(ErrorReadingText(ListSessionWith(c.from, c.to)), c.message) << c.to;
  }
  EXPECT_EQ(ErrorReadingText("capture_fps: 1000\ncameras: []\nbody: body.yaml\n"),
            "session.yaml:2: key 'cameras': expected a list of at least one camera {name, clip, "
            "camera}, got '[]'");
}

TEST_F(SessionListTest, EstimatingOffsetsNeedsASecondCamera) {
  EXPECT_EQ(ErrorReading("estimate_time_offsets: true\n"),
            "session.yaml:5: key 'estimate_time_offsets': expected false with a single camera "
            "(the first camera sets the clock: with no second camera there is no offset to "
            "estimate), got 'true'");
  EXPECT_EQ(ErrorReadingText(
                ListSessionWith("estimate_time_offsets: true", "estimate_time_offsets: 2")),
            "session.yaml:5: key 'estimate_time_offsets': expected true or false, got '2'");
}

TEST_F(SessionListTest, ErrorsInACameraFileNameThatFile) {
  WriteText("cal/top.yaml", "image_size: [640, 480]\nfx: wide\n");
  EXPECT_EQ(ErrorReadingText(kListSession).rfind("cal/top.yaml:2: key 'fx'", 0), 0u)
      << ErrorReadingText(kListSession);
}

}  // namespace
}  // namespace tumbletrace
