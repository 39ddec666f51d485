#include "tumbletrace/model/tracks.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <functional>
#include <random>
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

constexpr const char* kHeader = "frame,time_s,track,marker,x_px,y_px,quality\n";

// A fresh folder per test, removed afterwards.
class TracksCsvTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() /
              ("tumbletrace_tracks_" + std::string(info->name()) + "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_);
  }
  void TearDown() override { fs::remove_all(folder_); }

  fs::path Write(const std::string& text) const {
    const fs::path path = folder_ / "tracks.csv";
    std::ofstream(path, std::ios::binary) << text;
    return path;
  }
  // The message of reading `text` as tracks.csv, with the folder taken off the path.
  std::string ErrorReading(const std::string& text) const {
    const fs::path path = Write(text);
    std::string message = InputErrorOf([&] { ReadTracksCsv(path); });
    const std::string prefix = (folder_ / "").string();
    if (message.rfind(prefix, 0) == 0) message.erase(0, prefix.size());
    return message;
  }

  fs::path folder_;
};

TEST_F(TracksCsvTest, ReadsTheContractExample) {
  const std::vector<TrackPoint> points =
      ReadTracksCsv(Write(std::string(kHeader) + "120,0.120,3,2,512.31,301.77,0.94\n"
                                                 "121,0.121,4,,100.5,200.25,1\n"));
  ASSERT_EQ(points.size(), 2u);
  EXPECT_EQ(points[0].frame, 120);
  EXPECT_EQ(points[0].time_s, 0.120);
  EXPECT_EQ(points[0].track, 3);
  EXPECT_EQ(points[0].marker, 2);
  EXPECT_EQ(points[0].x_px, 512.31);
  EXPECT_EQ(points[0].y_px, 301.77);
  EXPECT_EQ(points[0].quality, 0.94);
  EXPECT_FALSE(points[1].marker.has_value());  // unidentified
}

TEST_F(TracksCsvTest, WriteThenReadGivesTheSamePoints) {
  std::mt19937 rng(4242u);
  std::uniform_real_distribution<double> pixel(0.0, 1024.0), quality(0.0, 1.0);
  std::vector<TrackPoint> points;
  for (int frame = 0; frame < 300; ++frame) {
    TrackPoint point;
    point.frame = frame;
    point.time_s = frame / 2997.0;
    point.track = frame % 7;
    if (frame % 3 != 0) point.marker = frame % 11;
    point.x_px = pixel(rng);
    point.y_px = pixel(rng);
    point.quality = quality(rng);
    points.push_back(point);
  }
  const fs::path path = folder_ / "tracks.csv";
  WriteTracksCsv(points, path);
  const std::vector<TrackPoint> back = ReadTracksCsv(path);
  ASSERT_EQ(back.size(), points.size());
  for (size_t i = 0; i < points.size(); ++i) {
    EXPECT_EQ(back[i].frame, points[i].frame);
    // Times with 9 significant digits: within half a unit of the ninth.
    EXPECT_NEAR(back[i].time_s, points[i].time_s, 5e-9 * points[i].time_s);
    EXPECT_EQ(back[i].track, points[i].track);
    EXPECT_EQ(back[i].marker, points[i].marker);
    // Written with 6 decimals: within half a unit of the last place.
    EXPECT_NEAR(back[i].x_px, points[i].x_px, 5e-7);
    EXPECT_NEAR(back[i].y_px, points[i].y_px, 5e-7);
    EXPECT_NEAR(back[i].quality, points[i].quality, 1e-6);
  }
  std::ifstream in(path);
  std::string header;
  std::getline(in, header);
  EXPECT_EQ(header + "\n", kHeader);
}

TEST_F(TracksCsvTest, EmptyListWritesTheHeaderOnly) {
  const fs::path path = folder_ / "tracks.csv";
  WriteTracksCsv({}, path);
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  EXPECT_EQ(text.str(), kHeader);
  EXPECT_TRUE(ReadTracksCsv(path).empty());
}

TEST_F(TracksCsvTest, AcceptsWindowsLineEndsAndBlankLines) {
  const std::vector<TrackPoint> points = ReadTracksCsv(
      Write("frame,time_s,track,marker,x_px,y_px,quality\r\n1,0.001,0,5,1.5,2.5,0.5\r\n\r\n"));
  ASSERT_EQ(points.size(), 1u);
  EXPECT_EQ(points[0].marker, 5);
}

TEST_F(TracksCsvTest, MalformedRowsNameLineAndColumn) {
  const std::string head = std::string(kHeader) + "1,0.001,0,5,1.5,2.5,0.5\n";
  EXPECT_EQ(ErrorReading(head + "2,0.002,x,5,1.5,2.5,0.5\n"),
            "tracks.csv:3:9: column 'track': expected an integer, 0 or more, got 'x'");
  EXPECT_EQ(ErrorReading(head + "2,0.002,1,5,1.5e,2.5,0.5\n"),
            "tracks.csv:3:13: column 'x_px': expected a finite number, got '1.5e'");
  EXPECT_EQ(ErrorReading(head + "2,0.002,1,5,1.5,nan,0.5\n"),
            "tracks.csv:3:17: column 'y_px': expected a finite number, got 'nan'");
  EXPECT_EQ(ErrorReading(head + "2,0.002,1,5,1.5,2.5,1.5\n"),
            "tracks.csv:3:21: column 'quality': expected a number from 0 to 1, got '1.5'");
  EXPECT_EQ(ErrorReading(head + "-2,0.002,1,5,1.5,2.5,0.5\n"),
            "tracks.csv:3:1: column 'frame': expected an integer, 0 or more, got '-2'");
  EXPECT_EQ(ErrorReading(head + "2,0.002,1,5,1.5,2.5\n"),
            "tracks.csv:3: expected 7 comma-separated fields "
            "(frame,time_s,track,marker,x_px,y_px,quality), got 6");
  EXPECT_EQ(ErrorReading(head + "2,,1,5,1.5,2.5,0.5\n"),
            "tracks.csv:3:3: column 'time_s': expected a finite number, got ''");
}

TEST_F(TracksCsvTest, WrongHeaderIsRefused) {
  EXPECT_EQ(ErrorReading("frame,t,track,marker,x,y,q\n"),
            "tracks.csv:1: expected the header 'frame,time_s,track,marker,x_px,y_px,quality' (or "
            "with ',camera' after it), got 'frame,t,track,marker,x,y,q'");
  EXPECT_EQ(ErrorReading("camera,frame,time_s,track,marker,x_px,y_px,quality\n"),
            "tracks.csv:1: expected the header 'frame,time_s,track,marker,x_px,y_px,quality' (or "
            "with ',camera' after it), got 'camera,frame,time_s,track,marker,x_px,y_px,quality'");
  EXPECT_EQ(ErrorReading(""),
            "tracks.csv:1: expected the header 'frame,time_s,track,marker,x_px,y_px,quality', "
            "got an empty file");
}

// ---- the camera column (several cameras) -------------------------------------------------

constexpr const char* kCameraHeader = "frame,time_s,track,marker,x_px,y_px,quality,camera\n";

TEST_F(TracksCsvTest, CameraColumnIsWrittenAndReadBackWhenAPointIsOfAnotherCamera) {
  std::vector<TrackPoint> points;
  for (int camera = 0; camera < 3; ++camera) {
    for (int frame = 0; frame < 4; ++frame) {
      TrackPoint point;
      point.frame = frame;
      point.time_s = frame / 1000.0;
      point.track = 1;  // track ids are per camera
      point.marker = 2;
      point.x_px = 100.0 + camera;
      point.y_px = 50.0 + frame;
      point.camera = camera;
      points.push_back(point);
    }
  }
  const fs::path path = folder_ / "tracks.csv";
  WriteTracksCsv(points, path);
  std::ifstream in(path);
  std::string header, first, last, line;
  std::getline(in, header);
  std::getline(in, first);
  while (std::getline(in, line)) last = line;
  EXPECT_EQ(header + "\n", kCameraHeader);  // the contract's columns first, unchanged
  EXPECT_EQ(first, "0,0,1,2,100.000000,50.000000,1,0");
  EXPECT_EQ(last, "3,0.003,1,2,102.000000,53.000000,1,2");
  const std::vector<TrackPoint> back = ReadTracksCsv(path);
  ASSERT_EQ(back.size(), points.size());
  for (size_t i = 0; i < points.size(); ++i) {
    EXPECT_EQ(back[i].camera, points[i].camera);
    EXPECT_EQ(back[i].frame, points[i].frame);
    EXPECT_EQ(back[i].x_px, points[i].x_px);
  }
}

TEST_F(TracksCsvTest, FirstCameraOnlyIsWrittenWithoutTheCameraColumn) {
  TrackPoint point;
  point.marker = 1;
  const fs::path path = folder_ / "tracks.csv";
  WriteTracksCsv({point}, path);
  std::ifstream in(path);
  std::string header;
  std::getline(in, header);
  EXPECT_EQ(header + "\n", kHeader);
  // A file with the column whose points are all of the first camera reads the same.
  const std::vector<TrackPoint> points =
      ReadTracksCsv(Write(std::string(kCameraHeader) + "7,0.007,0,3,1.5,2.5,0.5,0\n"));
  ASSERT_EQ(points.size(), 1u);
  EXPECT_EQ(points[0].camera, 0);
  EXPECT_EQ(points[0].marker, 3);
}

TEST_F(TracksCsvTest, MalformedCameraColumnNamesLineAndColumn) {
  const std::string head = std::string(kCameraHeader) + "1,0.001,0,5,1.5,2.5,0.5,1\n";
  EXPECT_EQ(ErrorReading(head + "2,0.002,0,5,1.5,2.5,0.5,-1\n"),
            "tracks.csv:3:25: column 'camera': expected an integer, 0 or more, got '-1'");
  EXPECT_EQ(ErrorReading(head + "2,0.002,0,5,1.5,2.5,0.5,top\n"),
            "tracks.csv:3:25: column 'camera': expected an integer, 0 or more, got 'top'");
  EXPECT_EQ(ErrorReading(head + "2,0.002,0,5,1.5,2.5,0.5\n"),
            "tracks.csv:3: expected 8 comma-separated fields "
            "(frame,time_s,track,marker,x_px,y_px,quality,camera), got 7");
  // Without the column in the header, a row with it has a field too many.
  EXPECT_EQ(ErrorReading(std::string(kHeader) + "2,0.002,0,5,1.5,2.5,0.5,1\n"),
            "tracks.csv:2: expected 7 comma-separated fields "
            "(frame,time_s,track,marker,x_px,y_px,quality), got 8");
}

TEST_F(TracksCsvTest, MissingFileNamesThePath) {
  const fs::path path = folder_ / "nowhere.csv";
  EXPECT_EQ(InputErrorOf([&] { ReadTracksCsv(path); }),
            path.string() + ": file not found or not readable");
}

}  // namespace
}  // namespace tumbletrace
