// The command line end to end (docs/files.md): the real `tumbletrace` binary is run
// on files written by the test, and its exit code, output files and messages are checked.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <opencv2/videoio.hpp>
#include <sstream>
#include <string>
#include <vector>

#include <opencv2/imgcodecs.hpp>

#include "support/board_views.hpp"
#include "tumbletrace/clip/video_writer.hpp"

namespace {

namespace fs = std::filesystem;
using nlohmann::json;

// Invented test inputs: a 300 mm hammer-like tool (a wooden handle and a steel head) with
// six flat dots on one face, mm units. The values describe no real product.
constexpr const char* kBodyYaml = R"(units: mm
markers:
  - {id: 1, at: [20, 0, 14], diameter: 8, normal: [0, 0, 1]}
  - {id: 2, at: [100, 0, 14], diameter: 8, normal: [0, 0, 1]}
  - {id: 3, at: [180, 0, 14], diameter: 8, normal: [0, 0, 1]}
  - {id: 4, at: [250, 0, 14], diameter: 8, normal: [0, 0, 1]}
  - {id: 5, at: [285, 30, 11], diameter: 8, normal: [0, 0, 1]}
  - {id: 6, at: [285, -30, 11], diameter: 8, normal: [0, 0, 1]}
references:
  grip_end: [0, 0, 0]
  head_face: [300, 0, 0]
parts:
  - {shape: cylinder, name: handle, axis: x, from: [0, 0, 0], length: 270, diameter: 28, density_kgpm3: 700}
  - {shape: box, name: head, center: [285, 0, 0], size: [30, 80, 22], density_kgpm3: 7850}
)";

// Invented camera: 3 m from the flight plane (world x-z, z up), facing it squarely.
constexpr const char* kCameraYaml = R"(image_size: [1024, 768]
fx: 1400.0
fy: 1400.0
cx: 511.5
cy: 383.5
distortion: [-0.08, 0.02, 0, 0, 0]
world_to_camera:
  rotation: [[1, 0, 0], [0, 0, -1], [0, 1, 0]]
  translation_m: [0, 0, 3.0]
)";

// A small invented camera for the video case (even sizes, as the H.264 writer requires).
constexpr const char* kSmallCameraYaml = R"(image_size: [320, 240]
fx: 400.0
fy: 400.0
cx: 159.5
cy: 119.5
distortion: [0, 0, 0, 0, 0]
world_to_camera:
  rotation: [[1, 0, 0], [0, 0, -1], [0, 1, 0]]
  translation_m: [0, 0, 3.0]
)";

// Two invented cameras with small images (640 x 480) for the two-camera cases. The first:
// the central window of the facing camera.
std::string FrontSmallCameraYaml() {
  std::string camera = kCameraYaml;
  for (const auto& [from, to] : {std::pair<std::string, std::string>{"[1024, 768]", "[640, 480]"},
                                 {"cx: 511.5", "cx: 319.5"},
                                 {"cy: 383.5", "cy: 239.5"}}) {
    camera.replace(camera.find(from), from.size(), to);
  }
  return camera;
}

// The second: a view from the other side and from above, looking at the world origin from
// (1.6, -2.4, 1.5) m, with a distortion of its own.
constexpr const char* kSideSmallCameraYaml = R"(image_size: [640, 480]
fx: 1400.0
fy: 1400.0
cx: 319.5
cy: 239.5
distortion: [-0.10, 0.03, -0.0002, 0.0003, 0.004]
world_to_camera:
  rotation: [[0.8320502943, 0.5547001962, 0], [0.2559246305, -0.3838869457, -0.8872053857],
             [-0.4921330015, 0.7381995023, -0.4613746889]]
  translation_m: [0, 0, 3.2511536414]
)";

// An invented throw: 5 rev/s about body z (turned to world -y), fixed seed.
std::string ScenarioYaml(int frames, bool video, const std::string& camera = "camera.yaml") {
  std::ostringstream out;
  out << "body: body.yaml\n"
      << "camera: " << camera << "\n"
      << "capture_fps: 1000\n"
      << "frames: " << frames << "\n"
      << "gravity_mps2: [0, 0, -9.80665]\n"
      << "launch:\n"
      << "  position_m: [-0.4, 0, -0.15]\n"
      << "  velocity_mps: [3.0, 0, 2.5]\n"
      << "  orientation: {axis: [1, 0, 0], angle_deg: 90}\n"
      << "spin: {axis_body: [0, 0, 1], rate_rev_per_s: 5}\n"
      << "noise: {tracks_sigma_px: 0.2, seed: 7}\n"
      << "video: {write: " << (video ? "true" : "false") << ", supersampling: 2}\n";
  return out.str();
}

// The same throw filmed by the two small cameras, "front" and "side", on one clock;
// `video` as png frames.
std::string TwoCameraScenarioYaml(int frames, bool video) {
  std::string scenario = ScenarioYaml(frames, video);
  scenario.replace(scenario.find("camera: camera.yaml\n"), 20,
                   "cameras:\n  - {name: front, camera: front.yaml}\n"
                   "  - {name: side, camera: side.yaml}\n");
  if (video) {
    scenario.replace(scenario.find("video: {write: true"), 19, "video: {write: true, format: png");
  }
  return scenario;
}

struct RunResult {
  int exit_code = -1;
  std::string out;
  std::string err;
};

std::string ReadText(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

std::vector<std::string> Lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) lines.push_back(line);
  return lines;
}

// A fresh working folder per test holding body.yaml, camera.yaml and the scenario files;
// the binary runs with it as the current folder. Removed afterwards.
class CliTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() /
              ("tumbletrace_cli_" + std::string(info->name()) + "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_);
    Write("body.yaml", kBodyYaml);
    Write("camera.yaml", kCameraYaml);
  }
  void TearDown() override { fs::remove_all(folder_); }

  fs::path Path(const std::string& name) const { return folder_ / name; }

  void Write(const std::string& name, const std::string& text) const {
    std::ofstream(folder_ / name, std::ios::binary) << text;
  }

  // Runs `tumbletrace ARGS` in the working folder, capturing stdout and stderr.
  RunResult Run(const std::string& args) const {
    const fs::path out = folder_ / "cli_stdout.txt", err = folder_ / "cli_stderr.txt";
    const std::string command = "cd '" + folder_.string() + "' && '" TUMBLETRACE_BINARY "' " +
                                args + " >'" + out.string() + "' 2>'" + err.string() + "'";
    const int status = std::system(command.c_str());
    RunResult r;
    r.exit_code = (status != -1 && WIFEXITED(status)) ? WEXITSTATUS(status) : -1;
    r.out = ReadText(out);
    r.err = ReadText(err);
    return r;
  }

  // Simulates `frames` frames without video into sim/.
  void SimulateInto(int frames) const {
    Write("scenario.yaml", ScenarioYaml(frames, false));
    const RunResult r = Run("simulate scenario.yaml -o sim --no-video");
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }

  fs::path folder_;
};

// ---- simulate ---------------------------------------------------------------------------

TEST_F(CliTest, SimulateWithoutVideoWritesEveryFileButTheClip) {
  Write("scenario.yaml", ScenarioYaml(100, true));
  const RunResult r = Run("simulate scenario.yaml -o sim --no-video");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  for (const char* name :
       {"session.yaml", "camera.yaml", "body.yaml", "truth.json", "tracks.csv"}) {
    EXPECT_TRUE(fs::is_regular_file(Path("sim") / name)) << name;
  }
  EXPECT_FALSE(fs::exists(Path("sim/clip.mp4")));
  const json truth = json::parse(ReadText(Path("sim/truth.json")));
  ASSERT_TRUE(truth.at("cm").at("body_m").is_array());
  EXPECT_EQ(truth.at("frames").size(), 100u);
  const std::vector<std::string> tracks = Lines(ReadText(Path("sim/tracks.csv")));
  ASSERT_FALSE(tracks.empty());
  EXPECT_EQ(tracks[0], "frame,time_s,track,marker,x_px,y_px,quality");
  EXPECT_EQ(tracks.size(), 1u + 100u * 6u);  // every marker seen in every frame
}

TEST_F(CliTest, SimulateWithVideoWritesAClipOpenCvReadsFrameByFrame) {
  Write("small_camera.yaml", kSmallCameraYaml);
  Write("scenario.yaml", ScenarioYaml(20, true, "small_camera.yaml"));
  const RunResult r = Run("simulate scenario.yaml -o sim");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  ASSERT_TRUE(fs::is_regular_file(Path("sim/clip.mp4")));
  cv::VideoCapture capture(Path("sim/clip.mp4").string());
  ASSERT_TRUE(capture.isOpened());
  int frames = 0;
  cv::Mat image;
  while (capture.read(image)) {
    EXPECT_EQ(image.cols, 320);
    EXPECT_EQ(image.rows, 240);
    ++frames;
  }
  EXPECT_EQ(frames, 20);
}

// ---- fit --------------------------------------------------------------------------------

TEST_F(CliTest, FitOfSimulatedTracksRecoversTheCmAndWritesItsFiles) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(150));
  const RunResult r = Run("fit sim/session.yaml --tracks sim/tracks.csv -o out");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  for (const char* name : {"results.json", "frames.csv", "residuals.csv"}) {
    EXPECT_TRUE(fs::is_regular_file(Path("out") / name)) << name;
  }
  const json results = json::parse(ReadText(Path("out/results.json")));
  const json truth = json::parse(ReadText(Path("sim/truth.json")));
  ASSERT_TRUE(results.at("cm").at("body_m").at(0).is_number());
  EXPECT_NEAR(results["cm"]["body_m"][0].get<double>(),
              truth.at("cm").at("body_m").at(0).get<double>(), 1e-3);
  EXPECT_NE(r.out.find("mm"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("rev/s"), std::string::npos) << r.out;
  EXPECT_TRUE(fs::is_regular_file(Path("out/report.html")));
  EXPECT_FALSE(fs::exists(Path("out/overlay.mp4")));  // fit reads no clip
}

TEST_F(CliTest, ReportRewritesThePageFromTheResultsFolderAlone) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(120));
  ASSERT_EQ(Run("fit sim/session.yaml --tracks sim/tracks.csv -o out -q").exit_code, 0);
  const std::string written = ReadText(Path("out/report.html"));
  ASSERT_NE(written.find("id=\"verdict\""), std::string::npos);
  // Only the result files in a new folder: the same page.
  fs::create_directories(Path("copy"));
  for (const char* name : {"results.json", "frames.csv", "residuals.csv"}) {
    fs::copy_file(Path("out") / name, Path("copy") / name);
  }
  const RunResult r = Run("report copy");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(ReadText(Path("copy/report.html")), written);
  EXPECT_NE(r.out.find("report.html"), std::string::npos);
  const json results = json::parse(ReadText(Path("out/results.json")));
  EXPECT_EQ(results.at("body").at("markers").size(), 6u);
  EXPECT_EQ(results.at("inputs").at("file_details").size(), 4u);  // session, camera, body, tracks
  EXPECT_EQ(results["inputs"]["file_details"][3].at("sha256").get<std::string>().size(), 64u);
}

TEST_F(CliTest, ReportOfAFolderWithoutResultsIsBadInputNamingTheFile) {
  fs::create_directories(Path("empty"));
  const RunResult r = Run("report empty");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("results.json"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("empty/report.html")));
  EXPECT_EQ(Run("report no_such_folder").exit_code, 2);
}

// ---- bad input: exit 2, the message names the file and the key ------------------------

// A throw held by a hand until 45 ms and stopped by a net at 205 ms (invented): `fit` finds
// the window and says what happened at each end; `--whole-clip` fits every frame instead
// and the summary shows the misfit; `--drag none` is reported as asked for.
TEST_F(CliTest, FitFindsTheFreeFlightWindowUnlessToldToUseTheWholeClip) {
  std::string scenario = ScenarioYaml(250, false);
  scenario += "hand: {release_time_s: 0.0445, acceleration_mps2: [120, 0, 60], "
              "angular_acceleration_radps2: [0, 0, -400]}\n"
              "impact: {time_s: 0.2045, normal: [-1, 0, 0], restitution: 0.5}\n";
  Write("scenario.yaml", scenario);
  ASSERT_EQ(Run("simulate scenario.yaml -o sim --no-video -q").exit_code, 0);
  const RunResult r = Run("fit sim/session.yaml --tracks sim/tracks.csv -o out --drag none");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("Free flight found in frames"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("the release"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("impact"), std::string::npos) << r.out;
  const json results = json::parse(ReadText(Path("out/results.json")));
  EXPECT_TRUE(results["window"]["detected"].get<bool>());
  EXPECT_NEAR(results["window"]["first_frame"].get<int>(), 45, 2);
  EXPECT_NEAR(results["window"]["last_frame"].get<int>(), 204, 2);
  EXPECT_EQ(results["drag"]["model"], "none");
  EXPECT_EQ(results["drag"]["criterion"], "asked for");
  const json truth = json::parse(ReadText(Path("sim/truth.json")));
  EXPECT_EQ(truth["window"]["first_frame"], 45);
  EXPECT_EQ(truth["window"]["last_frame"], 204);

  const RunResult whole =
      Run("fit sim/session.yaml --tracks sim/tracks.csv -o whole --whole-clip --rotation constant-spin");
  ASSERT_EQ(whole.exit_code, 0) << whole.err;
  const json all = json::parse(ReadText(Path("whole/results.json")));
  EXPECT_FALSE(all["window"]["detected"].get<bool>());
  EXPECT_EQ(all["window"]["first_frame"], 0);
  EXPECT_EQ(all["window"]["last_frame"], 249);
  EXPECT_GT(all["fit"]["rms_px"].get<double>(), 5 * results["fit"]["rms_px"].get<double>());
}

TEST_F(CliTest, SessionWithAnUnknownKeyIsBadInputNamingTheKey) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(20));
  Write("sim/odd_session.yaml", ReadText(Path("sim/session.yaml")) + "colour: red\n");
  const RunResult r = Run("fit sim/odd_session.yaml --tracks sim/tracks.csv -o out");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("odd_session.yaml"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("colour"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
}

TEST_F(CliTest, CameraWithATextFocalLengthIsBadInputNamingTheKey) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(20));
  std::string camera = kCameraYaml;
  camera.replace(camera.find("fx: 1400.0"), 10, "fx: abc");
  Write("sim/bad_camera.yaml", camera);
  std::string session = ReadText(Path("sim/session.yaml"));
  session.replace(session.find("camera: camera.yaml"), 19, "camera: bad_camera.yaml");
  Write("sim/bad_camera_session.yaml", session);
  const RunResult r = Run("fit sim/bad_camera_session.yaml --tracks sim/tracks.csv -o out");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("bad_camera.yaml"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("fx"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
}

TEST_F(CliTest, MissingTracksFileIsRefusedByTheArgumentCheck) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(20));
  const RunResult r = Run("fit sim/session.yaml --tracks sim/no_such_tracks.csv -o out");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("no_such_tracks.csv"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("--tracks"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
}

TEST_F(CliTest, TracksWithAMalformedRowAreBadInputNamingTheLineAndColumnAndLeftUntouched) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(20));
  std::vector<std::string> lines = Lines(ReadText(Path("sim/tracks.csv")));
  ASSERT_GT(lines.size(), 3u);
  // Line 3 (the second data row): its time_s becomes text.
  const size_t first_comma = lines[2].find(',');
  const size_t second_comma = lines[2].find(',', first_comma + 1);
  lines[2].replace(first_comma + 1, second_comma - first_comma - 1, "soon");
  std::string text;
  for (const std::string& line : lines) text += line + "\n";
  Write("sim/bad_tracks.csv", text);

  const RunResult r = Run("fit sim/session.yaml --tracks sim/bad_tracks.csv -o out");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("bad_tracks.csv:3"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("time_s"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
  EXPECT_EQ(ReadText(Path("sim/bad_tracks.csv")), text);  // inputs are never touched
}

// Marker 99 is not in body.yaml: bad input, and by the contract the message names the file
// (here it names only "tracks", see the report of this test suite).
TEST_F(CliTest, TracksNamingAMarkerTheBodyLacksAreBadInputNamingTheTracksFile) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(20));
  std::vector<std::string> lines = Lines(ReadText(Path("sim/tracks.csv")));
  ASSERT_GT(lines.size(), 2u);
  // Line 2: frame 0, track 1, marker 1 -> marker 99.
  ASSERT_EQ(lines[1].rfind("0,0,1,1,", 0), 0u) << lines[1];
  lines[1].replace(0, 8, "0,0,1,99,");
  std::string text;
  for (const std::string& line : lines) text += line + "\n";
  Write("sim/unknown_marker_tracks.csv", text);

  const RunResult r = Run("fit sim/session.yaml --tracks sim/unknown_marker_tracks.csv -o out");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("99"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("unknown_marker_tracks.csv"), std::string::npos)
      << "CONTRACT: a bad-input message names the file; got: " << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
}

// ---- data that cannot carry a fit: exit 3 ----------------------------------------------

TEST_F(CliTest, TracksOfOnlyTwoFramesDoNotSupportAFit) {
  ASSERT_NO_FATAL_FAILURE(SimulateInto(20));
  std::string text;
  for (const std::string& line : Lines(ReadText(Path("sim/tracks.csv")))) {
    if (line.rfind("frame,", 0) == 0 || line.rfind("0,", 0) == 0 || line.rfind("1,", 0) == 0) {
      text += line + "\n";
    }
  }
  ASSERT_EQ(Lines(text).size(), 1u + 2u * 6u);
  Write("sim/two_frames.csv", text);
  const RunResult r = Run("fit sim/session.yaml --tracks sim/two_frames.csv -o out");
  EXPECT_EQ(r.exit_code, 3) << r.err;
  EXPECT_NE(r.err.find("frames"), std::string::npos) << r.err;  // the reason
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
}

// ---- help and quiet ---------------------------------------------------------------------

// ---- several cameras ---------------------------------------------------------------------

TEST_F(CliTest, FitOfTwoCamerasTracksReadsTheCameraColumn) {
  Write("front.yaml", FrontSmallCameraYaml());
  Write("side.yaml", kSideSmallCameraYaml);
  Write("scenario.yaml", TwoCameraScenarioYaml(100, false));
  const RunResult sim = Run("simulate scenario.yaml -o sim --no-video");
  ASSERT_EQ(sim.exit_code, 0) << sim.err;
  for (const char* name : {"front_camera.yaml", "side_camera.yaml", "session.yaml"}) {
    EXPECT_TRUE(fs::is_regular_file(Path("sim") / name)) << name;
  }
  const std::vector<std::string> tracks = Lines(ReadText(Path("sim/tracks.csv")));
  ASSERT_GT(tracks.size(), 1u);
  EXPECT_EQ(tracks[0], "frame,time_s,track,marker,x_px,y_px,quality,camera");
  EXPECT_EQ(tracks.back().substr(tracks.back().rfind(',')), ",1");

  const RunResult r = Run("fit sim/session.yaml --tracks sim/tracks.csv -o out");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const json results = json::parse(ReadText(Path("out/results.json")));
  const json truth = json::parse(ReadText(Path("sim/truth.json")));
  EXPECT_NEAR(results["cm"]["body_m"][0].get<double>(), truth["cm"]["body_m"][0].get<double>(),
              1e-3);
  EXPECT_EQ(results["fit"]["observations"].get<int>(), 2 * 100 * 6);  // both cameras' sightings

  // A point of a third camera, which the session does not have: bad input naming the line.
  std::vector<std::string> lines = tracks;
  lines[5].replace(lines[5].rfind(','), std::string::npos, ",2");
  std::string text;
  for (const std::string& line : lines) text += line + "\n";
  Write("sim/third_camera.csv", text);
  const RunResult bad = Run("fit sim/session.yaml --tracks sim/third_camera.csv -o bad");
  EXPECT_EQ(bad.exit_code, 2) << bad.err;
  EXPECT_NE(bad.err.find("third_camera.csv:6: column 'camera': expected a camera index from 0 "
                         "to 1"),
            std::string::npos)
      << bad.err;
  EXPECT_FALSE(fs::exists(Path("bad/results.json")));

  // The first camera's points only, without the column: fitted, with a warning naming the
  // camera left out.
  std::string front_only = "frame,time_s,track,marker,x_px,y_px,quality\n";
  for (size_t i = 1; i < tracks.size(); ++i) {
    const size_t last_comma = tracks[i].rfind(',');
    if (tracks[i].substr(last_comma) == ",0") front_only += tracks[i].substr(0, last_comma) + "\n";
  }
  Write("sim/front_only.csv", front_only);
  const RunResult front = Run("fit sim/session.yaml --tracks sim/front_only.csv -o front -q");
  ASSERT_EQ(front.exit_code, 0) << front.err;
  EXPECT_NE(front.err.find("holds no identified marker of camera 'side' (camera 1 of "),
            std::string::npos)
      << front.err;
  const json front_results = json::parse(ReadText(Path("front/results.json")));
  EXPECT_EQ(front_results["fit"]["observations"].get<int>(), 100 * 6);
}

TEST_F(CliTest, HelpOfTheProgramAndEachCommandSaysWhatItWrites) {
  struct Case {
    std::string args;
    std::vector<std::string> mentions;
  };
  const std::vector<Case> cases = {
      {"--help", {"simulate", "fit", "results.json", "truth.json", "Exit codes"}},
      {"simulate --help", {"clip.mp4", "session.yaml", "truth.json", "tracks.csv", "--no-video"}},
      {"fit --help", {"results.json", "frames.csv", "residuals.csv", "--tracks", "--drag",
                      "--whole-clip", "--estimate-gravity", "--first-frame"}},
      {"analyze --help", {"free-flight", "drag", "results.json", "tracks.csv", "report.html", "overlay.mp4"}},
      {"report --help", {"report.html", "results.json", "frames.csv"}},
  };
  for (const Case& c : cases) {
    const RunResult r = Run(c.args);
    EXPECT_EQ(r.exit_code, 0) << c.args << ": " << r.err;
    for (const std::string& word : c.mentions) {
      EXPECT_NE(r.out.find(word), std::string::npos) << c.args << " lacks '" << word << "':\n"
                                                     << r.out;
    }
  }
}

TEST_F(CliTest, QuietSimulateAndFitPrintNothingOnStdout) {
  Write("scenario.yaml", ScenarioYaml(100, false));
  const RunResult sim = Run("simulate scenario.yaml -o sim -q");
  ASSERT_EQ(sim.exit_code, 0) << sim.err;
  EXPECT_EQ(sim.out, "");
  const RunResult fit = Run("fit sim/session.yaml --tracks sim/tracks.csv -o out -q");
  ASSERT_EQ(fit.exit_code, 0) << fit.err;
  EXPECT_EQ(fit.out, "");
  EXPECT_TRUE(fs::is_regular_file(Path("out/results.json")));
}

}  // namespace

// ---- track and analyze: from a clip ------------------------------------------------------

namespace tumbletrace {
namespace {

class CliClipTest : public CliTest {
 protected:
  // Simulates a 120-frame clip into sim/ (the full-size camera, lossless PNG frames or H.264).
  void SimulateClip(bool png) const {
    std::string scenario = ScenarioYaml(120, true);
    if (png) {
      scenario.replace(scenario.find("video: {write: true"), 19, "video: {write: true, format: png");
    }
    Write("scenario.yaml", scenario);
    const RunResult r = Run("simulate scenario.yaml -o sim");
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }
};

TEST_F(CliClipTest, AnalyzeOfAClipWritesEveryResultAndRecoversTheCm) {
  ASSERT_NO_FATAL_FAILURE(SimulateClip(false));
  const RunResult r = Run("analyze sim/session.yaml -o out");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  for (const char* name :
       {"results.json", "frames.csv", "residuals.csv", "tracks.csv", "report.html", "overlay.mp4"}) {
    EXPECT_TRUE(fs::is_regular_file(Path("out") / name)) << name;
  }
  const json results = json::parse(ReadText(Path("out/results.json")));
  const json truth = json::parse(ReadText(Path("sim/truth.json")));
  EXPECT_NEAR(results["cm"]["body_m"][0].get<double>(), truth["cm"]["body_m"][0].get<double>(), 1.5e-3);
  // The overlay has every frame of the clip, in colour.
  cv::VideoCapture overlay(Path("out/overlay.mp4").string());
  ASSERT_TRUE(overlay.isOpened());
  EXPECT_EQ(static_cast<int>(overlay.get(cv::CAP_PROP_FRAME_COUNT)), 120);
  // The clip is among the input files, with its size.
  const json& clip = results.at("inputs").at("file_details").back();
  EXPECT_EQ(clip.at("bytes").get<std::uintmax_t>(), fs::file_size(Path("sim/clip.mp4")));
  EXPECT_NE(r.out.find("identified"), std::string::npos) << r.out;
  // The playback rate written in the file differs from the capture rate: warned.
  EXPECT_NE(r.out.find("capture rate"), std::string::npos) << r.out;
}

TEST_F(CliClipTest, AnalyzeWithoutOverlayWritesTheResultsButNoVideo) {
  ASSERT_NO_FATAL_FAILURE(SimulateClip(false));
  const RunResult r = Run("analyze sim/session.yaml -o out --no-overlay");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_TRUE(fs::is_regular_file(Path("out/results.json")));
  EXPECT_TRUE(fs::is_regular_file(Path("out/report.html")));
  EXPECT_FALSE(fs::exists(Path("out/overlay.mp4")));
  // The background filter's radius, chosen from the markers' size, is printed.
  EXPECT_NE(r.out.find("background filter radius"), std::string::npos) << r.out;
}

TEST_F(CliClipTest, TrackWritesIdentifiedTracks) {
  ASSERT_NO_FATAL_FAILURE(SimulateClip(true));
  const RunResult r = Run("track sim/session.yaml -o out");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const std::vector<std::string> lines = Lines(ReadText(Path("out/tracks.csv")));
  ASSERT_GT(lines.size(), 600u);
  EXPECT_EQ(lines[0], "frame,time_s,track,marker,x_px,y_px,quality");
  EXPECT_EQ(lines[1].find(",,"), std::string::npos) << "an unidentified first row: " << lines[1];
}

TEST_F(CliClipTest, TruncatedVideoIsBadInputAndWritesNothing) {
  ASSERT_NO_FATAL_FAILURE(SimulateClip(false));
  fs::resize_file(Path("sim/clip.mp4"), fs::file_size(Path("sim/clip.mp4")) / 2);
  const RunResult r = Run("analyze sim/session.yaml -o out");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("clip.mp4"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
  EXPECT_FALSE(fs::exists(Path("out/tracks.csv")));
}

TEST_F(CliClipTest, MissingImageFolderIsBadInput) {
  ASSERT_NO_FATAL_FAILURE(SimulateClip(true));
  fs::remove_all(Path("sim/frames"));
  const RunResult r = Run("analyze sim/session.yaml -o out");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("frames"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
}

TEST_F(CliClipTest, ClipWithoutMarkersDoesNotSupportAFit) {
  std::string scenario = ScenarioYaml(40, true);
  scenario.replace(scenario.find("supersampling: 2}"), 17, "supersampling: 2, dot_level: 70}");
  Write("scenario.yaml", scenario);
  ASSERT_EQ(Run("simulate scenario.yaml -o sim").exit_code, 0);
  const RunResult r = Run("analyze sim/session.yaml -o out");
  EXPECT_EQ(r.exit_code, 3) << r.err;
  EXPECT_NE(r.err.find("no marker tracks"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("out/results.json")));
}

// `track` over two cameras' clips, then `fit` of what it wrote.
TEST_F(CliClipTest, TrackAndFitOfTwoCameras) {
  Write("front.yaml", FrontSmallCameraYaml());
  Write("side.yaml", kSideSmallCameraYaml);
  Write("scenario.yaml", TwoCameraScenarioYaml(60, true));
  const RunResult sim = Run("simulate scenario.yaml -o sim");
  ASSERT_EQ(sim.exit_code, 0) << sim.err;
  EXPECT_TRUE(fs::is_regular_file(Path("sim/side/frame_000059.png")));

  const RunResult track = Run("track sim/session.yaml -o out");
  ASSERT_EQ(track.exit_code, 0) << track.err;
  EXPECT_NE(track.out.find("front: Read 60 frames (640x480 px"), std::string::npos) << track.out;
  EXPECT_NE(track.out.find("side: Read 60 frames (640x480 px"), std::string::npos) << track.out;
  const std::vector<std::string> lines = Lines(ReadText(Path("out/tracks.csv")));
  ASSERT_GT(lines.size(), 1u);
  EXPECT_EQ(lines[0], "frame,time_s,track,marker,x_px,y_px,quality,camera");
  int of_camera[2] = {0, 0};
  for (size_t i = 1; i < lines.size(); ++i) {
    const std::string camera = lines[i].substr(lines[i].rfind(',') + 1);
    ASSERT_TRUE(camera == "0" || camera == "1") << lines[i];
    ++of_camera[camera == "1"];
  }
  EXPECT_GT(of_camera[0], 60 * 6 * 9 / 10);
  EXPECT_GT(of_camera[1], 60 * 6 * 9 / 10);

  const RunResult fit = Run("fit sim/session.yaml --tracks out/tracks.csv -o fit");
  ASSERT_EQ(fit.exit_code, 0) << fit.err;
  const json results = json::parse(ReadText(Path("fit/results.json")));
  const json truth = json::parse(ReadText(Path("sim/truth.json")));
  EXPECT_NEAR(results["cm"]["body_m"][0].get<double>(), truth["cm"]["body_m"][0].get<double>(),
              1e-3);
}

TEST_F(CliClipTest, HelpOfTrackAndAnalyzeSaysWhatTheyWrite) {
  const RunResult analyze = Run("analyze --help");
  EXPECT_EQ(analyze.exit_code, 0);
  for (const char* word : {"results.json", "frames.csv", "tracks.csv", "--estimate-gravity"}) {
    EXPECT_NE(analyze.out.find(word), std::string::npos) << word;
  }
  const RunResult track = Run("track --help");
  EXPECT_EQ(track.exit_code, 0);
  EXPECT_NE(track.out.find("tracks.csv"), std::string::npos);
}

// ---- camera set-up: calibrate and locate ---------------------------------------------------

// Renders `count` views of a 9 x 6 checkerboard (30 mm squares) by the simulator's board
// renderer into `folder` as numbered PNG images.
void RenderCalibrationImages(const fs::path& folder, int count) {
  fs::create_directories(folder);
  const CalibrationTarget target = testing::Checkerboard9x6();
  const CameraIntrinsics truth = testing::CalibrationTruth();
  int i = 0;
  for (const RigidTransform& pose : testing::BoardPoses(target, truth, count, 20, 45, 3)) {
    BoardImageSettings settings;
    settings.noise_seed = 100 + i;
    const cv::Mat image = RenderBoardImage(target.BlackPolygons(), truth, pose, settings);
    cv::imwrite((folder / ("view_" + std::to_string(100 + i++) + ".png")).string(), image);
  }
}

constexpr const char* kTargetYaml = "kind: checkerboard\nunits: mm\ninner_corners: [9, 6]\nsquare: 30\n";

TEST_F(CliTest, CalibrateFromRenderedImagesWritesTheCameraAndItsReport) {
  RenderCalibrationImages(Path("calib"), 12);
  Write("target.yaml", kTargetYaml);
  const RunResult r = Run("calibrate calib --target target.yaml -o cam");
  ASSERT_EQ(r.exit_code, 0) << r.err << r.out;
  for (const char* word : {"found in 12 of 12 images", "fx = ", " px", "rms", "Coverage", "deg"}) {
    EXPECT_NE(r.out.find(word), std::string::npos) << word << "\n" << r.out;
  }
  const json report = json::parse(ReadText(Path("cam/calibration.json")));
  EXPECT_EQ(report["views_used"].get<int>(), 12);
  EXPECT_TRUE(report["sigma"]["distortion"][4].is_null());  // k3 held
  const double fx = report["fx"].get<double>();
  EXPECT_NEAR(fx / testing::CalibrationTruth().fx_px, 1.0, 0.003);
  const std::string camera = ReadText(Path("cam/camera.yaml"));
  EXPECT_NE(camera.find("image_size: [1024, 768]"), std::string::npos) << camera;
  EXPECT_EQ(camera.find("world_to_camera"), std::string::npos);
  // The file says where it came from and how certain it is, in comments.
  EXPECT_EQ(camera.rfind("# Calibrated by tumbletrace calibrate from 12 views", 0), 0u) << camera;
  EXPECT_NE(camera.find("# 1-sigma: fx "), std::string::npos) << camera;

  // The calibrated camera located from surveyed points (their pixels through the truth).
  std::string points = "units: m\npoints:\n";
  RigidTransform pose;
  pose.rotation << 1, 0, 0, 0, 0, -1, 0, 1, 0;
  pose.translation_m = Eigen::Vector3d(0.05, 0.1, 3.0);
  for (double x : {-0.8, -0.2, 0.4, 0.9}) {
    for (double z : {-0.6, 0.0, 0.5}) {
      Eigen::Vector2d pixel;
      ASSERT_TRUE(ProjectBoardPoint(Eigen::Vector3d(x, 0.2 * z, z), testing::CalibrationTruth(),
                                    pose, &pixel));
      points += "  - {world: [" + std::to_string(x) + ", " + std::to_string(0.2 * z) + ", " +
                std::to_string(z) + "], pixel: [" + std::to_string(pixel.x()) + ", " +
                std::to_string(pixel.y()) + "]}\n";
    }
  }
  Write("points.yaml", points);
  const RunResult located = Run("locate --camera cam/camera.yaml --points points.yaml -o posed");
  ASSERT_EQ(located.exit_code, 0) << located.err;
  EXPECT_NE(located.out.find("deg"), std::string::npos);
  EXPECT_NE(located.out.find("mm"), std::string::npos);
  const std::string posed = ReadText(Path("posed/camera.yaml"));
  EXPECT_NE(posed.find("world_to_camera"), std::string::npos) << posed;
  EXPECT_NE(posed.find("# the world's vertical "), std::string::npos) << posed;
  EXPECT_NE(posed.find("fx: " + std::to_string(fx).substr(0, 6)), std::string::npos) << posed;
  const json pose_json = json::parse(ReadText(Path("posed/pose.json")));
  EXPECT_NEAR(pose_json["world_to_camera"]["translation_m"][2].get<double>(), 3.0, 0.02);
  EXPECT_GT(pose_json["sigma_rotation_deg"][0].get<double>(), 0.0);

  // Never over its input.
  const RunResult over = Run("locate --camera cam/camera.yaml --points points.yaml -o cam");
  EXPECT_EQ(over.exit_code, 2) << over.err;
}

// A clip of the board (each rendered view held for two frames, H.264): the second frame of
// each pose is a near-repeat and skipped, and the calibration uses the 12 distinct views.
TEST_F(CliTest, CalibrateFromAClipSkipsTheFramesThatRepeatAPose) {
  RenderCalibrationImages(Path("calib"), 12);
  {
    VideoWriter writer(Path("board.mp4"), cv::Size(1024, 768), 30.0);
    for (int i = 0; i < 12; ++i) {
      const cv::Mat image =
          cv::imread(Path("calib/view_" + std::to_string(100 + i) + ".png").string(),
                     cv::IMREAD_GRAYSCALE);
      writer.Write(image);
      writer.Write(image);
    }
  }
  Write("target.yaml", kTargetYaml);
  const RunResult r = Run("calibrate board.mp4 --target target.yaml -o cam");
  ASSERT_EQ(r.exit_code, 0) << r.err << r.out;
  for (const char* word : {"found in 24 of 24 frames", "12 of them repeat a pose", "12 views remain"}) {
    EXPECT_NE(r.out.find(word), std::string::npos) << word << "\n" << r.out;
  }
  const json report = json::parse(ReadText(Path("cam/calibration.json")));
  EXPECT_EQ(report["views_used"].get<int>(), 12);
  EXPECT_NEAR(report["fx"].get<double>() / testing::CalibrationTruth().fx_px, 1.0, 0.003);
  const RunResult all = Run("calibrate board.mp4 --target target.yaml --min-change 0 -o all");
  ASSERT_EQ(all.exit_code, 0) << all.err;
  EXPECT_EQ(json::parse(ReadText(Path("all/calibration.json")))["views_used"].get<int>(), 24);
}

// The README's walk from a board to `analyze`, on the demo's files (data-demo/setup/): a clip
// of an A3 checkerboard waved in front of the camera -> calibrate; one image of a ChArUco
// board hung in the throw plane -> locate; the demo throw analysed with that camera, gravity
// as a magnitude (the vertical measured from the flight in the located frame). The CM and
// the launch state agree with the simulator's truth (data-demo/truth.json) within their
// reported uncertainty.
TEST_F(CliTest, FromABoardClipAndOnePlacedImageToTheFit) {
  const fs::path demo = fs::path(TUMBLETRACE_SOURCE_DIR) / "data-demo";
  const RunResult calibrated =
      Run("calibrate " + (demo / "setup/target_views.mp4").string() + " --target " +
          (demo / "setup/target.yaml").string() + " -o cam");
  ASSERT_EQ(calibrated.exit_code, 0) << calibrated.err << calibrated.out;
  EXPECT_NE(calibrated.out.find("views remain"), std::string::npos) << calibrated.out;
  EXPECT_EQ(calibrated.err.find("warning"), std::string::npos) << calibrated.err;
  const RunResult located =
      Run("locate --camera cam/camera.yaml --image " + (demo / "setup/placed.png").string() +
          " --target " + (demo / "setup/placed_target.yaml").string() + " --down +y -o posed");
  ASSERT_EQ(located.exit_code, 0) << located.err << located.out;
  EXPECT_NE(located.out.find("the world's vertical to"), std::string::npos) << located.out;
  const json pose = json::parse(ReadText(Path("posed/pose.json")));
  // The demo camera stands 3 m from the world's origin, looking along world +y.
  EXPECT_LT(std::abs(pose["world_to_camera"]["translation_m"][2].get<double>() - 3.0),
            3e-3 * pose["sigma_translation_mm"][2].get<double>());
  EXPECT_GT(pose["sigma_vertical_deg"].get<double>(), 0.0);

  Write("session.yaml", "clip: " + (demo / "clip.mp4").string() +
                            "\ncapture_fps: 1000\ncamera: posed/camera.yaml\nbody: " +
                            (demo / "body.yaml").string() +
                            "\ngravity_mps2: 9.80665\nmarkers: {kind: bright-dots}\n");
  const RunResult analysed = Run("analyze session.yaml -o out -q");
  ASSERT_EQ(analysed.exit_code, 0) << analysed.err;
  const json results = json::parse(ReadText(Path("out/results.json")));
  const json truth = json::parse(ReadText(demo / "truth.json"));
  for (int i = 0; i < 2; ++i) {
    const double error = results["cm"]["body_m"][i].get<double>() -
                         truth["cm"]["body_m"][i].get<double>();
    EXPECT_LT(std::abs(error), 3 * results["cm"]["sigma_m"][i].get<double>()) << "axis " << i;
  }
  EXPECT_EQ(results["window"]["first_frame"].get<int>(), 0);
  const double vx = truth["launch"]["velocity_mps"][0].get<double>();
  const double vz = truth["launch"]["velocity_mps"][2].get<double>();
  EXPECT_LT(std::abs(results["launch"]["speed_mps"].get<double>() - std::hypot(vx, vz)),
            3 * results["launch"]["sigma_speed_mps"].get<double>());
  EXPECT_LT(std::abs(results["launch"]["angle_deg"].get<double>() -
                     std::atan2(vz, vx) * 180 / M_PI),
            3 * results["launch"]["sigma_angle_deg"].get<double>());
}

TEST_F(CliTest, CalibrateWithAnUnknownTargetKeyIsBadInputNamingTheKey) {
  RenderCalibrationImages(Path("calib"), 1);
  Write("target.yaml", std::string(kTargetYaml) + "colour: black\n");
  const RunResult r = Run("calibrate calib --target target.yaml -o cam");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("target.yaml"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("colour"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("cam/camera.yaml")));
}

TEST_F(CliTest, CalibrateFromTwoViewsDoesNotSupportTheResult) {
  RenderCalibrationImages(Path("calib"), 2);
  Write("target.yaml", kTargetYaml);
  const RunResult r = Run("calibrate calib --target target.yaml -o cam");
  EXPECT_EQ(r.exit_code, 3) << r.err;
  EXPECT_NE(r.err.find("at least 3"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(Path("cam/camera.yaml")));
}

TEST_F(CliTest, CalibratePrintsTheTargetAsSvg) {
  Write("target.yaml", kTargetYaml);
  const RunResult r = Run("calibrate --target target.yaml --print board.svg");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(ReadText(Path("board.svg")).find("<svg"), std::string::npos);
}

TEST_F(CliTest, HelpOfTheSetUpCommandsSaysWhatTheyReadAndWrite) {
  const RunResult calibrate = Run("calibrate --help");
  EXPECT_EQ(calibrate.exit_code, 0);
  for (const char* word : {"camera.yaml", "calibration.json", "Example", "--target", "--print"}) {
    EXPECT_NE(calibrate.out.find(word), std::string::npos) << word;
  }
  const RunResult locate = Run("locate --help");
  EXPECT_EQ(locate.exit_code, 0);
  for (const char* word : {"camera.yaml", "pose.json", "Example", "--down", "--points"}) {
    EXPECT_NE(locate.out.find(word), std::string::npos) << word;
  }
}

// Without world_to_camera and with gravity as a magnitude the fit estimates gravity's
// direction in the camera frame; with gravity as a world vector it is refused.
TEST_F(CliTest, FitWithoutACameraPoseEstimatesGravitysDirection) {
  SimulateInto(150);
  std::string camera = ReadText(Path("sim/camera.yaml"));
  camera = camera.substr(0, camera.find("world_to_camera"));
  Write("sim/camera.yaml", camera);
  std::string session = ReadText(Path("sim/session.yaml"));
  const size_t at = session.find("gravity_mps2:");
  ASSERT_NE(at, std::string::npos);
  const std::string vector_session = session;
  session.replace(at, session.find('\n', at) - at, "gravity_mps2: 9.80665");
  Write("sim/session.yaml", session);
  const RunResult r = Run("fit sim/session.yaml --tracks sim/tracks.csv -o out");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const json results = json::parse(ReadText(Path("out/results.json")));
  EXPECT_GT(results["gravity"]["sigma_direction_deg"].get<double>(), 0.0);
  // The simulated camera looks along world +y with its rows level: world -z is camera +y.
  EXPECT_GT(results["gravity"]["direction_world"][1].get<double>(), 0.999);

  Write("sim/session.yaml", vector_session);
  const RunResult refused = Run("fit sim/session.yaml --tracks sim/tracks.csv -o out2");
  EXPECT_EQ(refused.exit_code, 2);
  EXPECT_NE(refused.err.find("world_to_camera"), std::string::npos) << refused.err;
  EXPECT_NE(refused.err.find("magnitude"), std::string::npos) << refused.err;
}

}  // namespace
}  // namespace tumbletrace
