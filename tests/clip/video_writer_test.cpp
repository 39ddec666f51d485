#include "tumbletrace/clip/video_writer.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <opencv2/imgproc.hpp>
#include <opencv2/videoio.hpp>
#include <stdexcept>
#include <string>
#include <vector>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/sim/render.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

// A .mp4 name in the temporary folder, unique to the test and the process; removed after.
class TempVideo {
 public:
  TempVideo() {
    const ::testing::TestInfo* test = ::testing::UnitTest::GetInstance()->current_test_info();
    path_ = fs::temp_directory_path() / ("tumbletrace_" + std::string(test->name()) + "_" +
                                         std::to_string(::getpid()) + ".mp4");
  }
  ~TempVideo() {
    std::error_code ignored;
    fs::remove(path_, ignored);
  }
  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

std::vector<cv::Mat> ReadGrey(const fs::path& path) {
  cv::VideoCapture capture(path.string(), cv::CAP_FFMPEG);
  EXPECT_TRUE(capture.isOpened()) << path;
  std::vector<cv::Mat> frames;
  cv::Mat frame;
  while (capture.read(frame)) {
    cv::Mat grey;
    if (frame.channels() == 3) {
      cv::cvtColor(frame, grey, cv::COLOR_BGR2GRAY);
    } else {
      grey = frame.clone();
    }
    frames.push_back(grey);
  }
  return frames;
}

// Frames as the simulator makes them: a body with dots of radius 4 px that drift between
// frames, sensor noise of 2 levels.
struct DotClip {
  RenderSettings settings;
  std::vector<cv::Mat> frames;
  std::vector<std::vector<Eigen::Vector2d>> centers_px;  // per frame
};

DotClip RenderDotClip(cv::Size size, int frame_count, int dots_per_row) {
  DotClip clip;
  clip.settings.width_px = size.width;
  clip.settings.height_px = size.height;
  const double w = size.width;
  const double h = size.height;
  for (int f = 0; f < frame_count; ++f) {
    SceneInstant scene;
    const Eigen::Vector2d drift(0.37 * f, -0.23 * f);
    scene.silhouette_polygons_px.push_back(
        {Eigen::Vector2d(0.1 * w, 0.2 * h) + drift, Eigen::Vector2d(0.9 * w, 0.25 * h) + drift,
         Eigen::Vector2d(0.85 * w, 0.8 * h) + drift, Eigen::Vector2d(0.15 * w, 0.75 * h) + drift});
    std::vector<Eigen::Vector2d> centers;
    for (int row = 0; row < 2; ++row) {
      for (int i = 0; i < dots_per_row; ++i) {
        const Eigen::Vector2d center =
            Eigen::Vector2d(w * (0.25 + 0.5 * i / std::max(1, dots_per_row - 1)) + 0.31 * i,
                            h * (0.4 + 0.2 * row) + 0.17 * i) +
            drift;
        RenderedDot dot;
        dot.center_px = center;
        dot.shape_px2 = 16.0 * Eigen::Matrix2d::Identity();
        scene.dots.push_back(dot);
        centers.push_back(center);
      }
    }
    clip.settings.noise_seed = 1000 + f;
    clip.frames.push_back(RenderFrame({scene}, clip.settings));
    clip.centers_px.push_back(centers);
  }
  return clip;
}

// Intensity-weighted centroid above the local level, the mean of the window's border.
Eigen::Vector2d DotCentroid(const cv::Mat& grey, const Eigen::Vector2d& near_px,
                            int half_window_px) {
  const int cx = static_cast<int>(std::lround(near_px.x()));
  const int cy = static_cast<int>(std::lround(near_px.y()));
  double border_sum = 0.0;
  int border_count = 0;
  for (int y = cy - half_window_px; y <= cy + half_window_px; ++y) {
    for (int x = cx - half_window_px; x <= cx + half_window_px; ++x) {
      if (std::abs(y - cy) == half_window_px || std::abs(x - cx) == half_window_px) {
        border_sum += grey.at<std::uint8_t>(y, x);
        ++border_count;
      }
    }
  }
  const double local_level = border_sum / border_count;
  double weight_sum = 0.0;
  Eigen::Vector2d moment = Eigen::Vector2d::Zero();
  for (int y = cy - half_window_px; y <= cy + half_window_px; ++y) {
    for (int x = cx - half_window_px; x <= cx + half_window_px; ++x) {
      const double w = grey.at<std::uint8_t>(y, x) - local_level;
      weight_sum += w;
      moment += w * Eigen::Vector2d(x, y);
    }
  }
  return moment / weight_sum;
}

TEST(VideoWriter, ThirtyFramesReadBackWithTheirSizeAndContent) {
  const TempVideo video;
  const cv::Size size(320, 240);
  const DotClip clip = RenderDotClip(size, 30, 3);
  {
    VideoWriter writer(video.path(), size, 30.0);
    for (const cv::Mat& frame : clip.frames) writer.Write(frame);
    EXPECT_EQ(writer.frames_written(), 30);
  }  // the destructor closes the file
  const std::vector<cv::Mat> decoded = ReadGrey(video.path());
  ASSERT_EQ(decoded.size(), 30u);
  for (std::size_t i = 0; i < decoded.size(); ++i) {
    ASSERT_EQ(decoded[i].size(), size);
    cv::Mat difference;
    cv::absdiff(decoded[i], clip.frames[i], difference);
    EXPECT_LT(cv::mean(difference)[0], 2.0) << "frame " << i;
  }
}

TEST(VideoWriter, ColourVideoTakesGreyAndColourFrames) {
  const TempVideo video;
  const cv::Size size(160, 120);
  const DotClip clip = RenderDotClip(size, 6, 2);
  VideoWriter writer(video.path(), size, 25.0, /*color=*/true);
  for (std::size_t i = 0; i < clip.frames.size(); ++i) {
    if (i % 2 == 0) {
      writer.Write(clip.frames[i]);
    } else {
      cv::Mat bgr;
      cv::cvtColor(clip.frames[i], bgr, cv::COLOR_GRAY2BGR);
      writer.Write(bgr);
    }
  }
  writer.Close();
  const std::vector<cv::Mat> decoded = ReadGrey(video.path());
  ASSERT_EQ(decoded.size(), clip.frames.size());
  for (std::size_t i = 0; i < decoded.size(); ++i) {
    cv::Mat difference;
    cv::absdiff(decoded[i], clip.frames[i], difference);
    EXPECT_LT(cv::mean(difference)[0], 4.0) << "frame " << i;
  }
}

// OpenCV 4.6 encodes at x264's CRF 23 with no way to ask for more (see video_writer.cpp).
// This measures what that does to the sub-pixel dot centroids the detector relies on: each
// dot's centroid in the decoded frame against the one in the frame written. Measured with
// this clip: 0.085 px rms, 0.24 px at worst (about 0.04 px rms in the first, intra-coded
// frame, 0.06 px rms without sensor noise). The bounds guard that level; they are not the
// 0.05 px the detector would like, which this back end cannot reach.
TEST(VideoWriter, H264MovesDotCentroidsByUnderATenthOfAPixelRms) {
  const TempVideo video;
  const cv::Size size(640, 480);
  const DotClip clip = RenderDotClip(size, 20, 4);
  VideoWriter writer(video.path(), size, 30.0);
  for (const cv::Mat& frame : clip.frames) writer.Write(frame);
  writer.Close();
  const std::vector<cv::Mat> decoded = ReadGrey(video.path());
  ASSERT_EQ(decoded.size(), clip.frames.size());

  double sum_squared_px2 = 0.0;
  double worst_px = 0.0;
  int count = 0;
  for (std::size_t f = 0; f < decoded.size(); ++f) {
    for (const Eigen::Vector2d& center : clip.centers_px[f]) {
      const Eigen::Vector2d written = DotCentroid(clip.frames[f], center, 8);
      const Eigen::Vector2d read = DotCentroid(decoded[f], center, 8);
      const double shift_px = (read - written).norm();
      sum_squared_px2 += shift_px * shift_px;
      worst_px = std::max(worst_px, shift_px);
      ++count;
    }
  }
  const double rms_px = std::sqrt(sum_squared_px2 / count);
  RecordProperty("centroid_shift_rms_px", std::to_string(rms_px));
  RecordProperty("centroid_shift_max_px", std::to_string(worst_px));
  EXPECT_LT(rms_px, 0.12);
  EXPECT_LT(worst_px, 0.35);
}

TEST(VideoWriter, RefusesAFolderThatDoesNotExist) {
  const fs::path path = fs::temp_directory_path() / "tumbletrace_no_such_folder" / "clip.mp4";
  try {
    VideoWriter writer(path, cv::Size(320, 240), 30.0);
    FAIL() << "expected InputError";
  } catch (const InputError& error) {
    EXPECT_NE(std::string(error.what()).find(path.string()), std::string::npos) << error.what();
  }
}

TEST(VideoWriter, RefusesBadSettings) {
  const TempVideo video;
  const fs::path avi = fs::path(video.path()).replace_extension(".avi");
  EXPECT_THROW(VideoWriter(avi, cv::Size(320, 240), 30.0), InputError);
  EXPECT_THROW(VideoWriter(video.path(), cv::Size(321, 240), 30.0), InputError);  // odd
  EXPECT_THROW(VideoWriter(video.path(), cv::Size(0, 240), 30.0), InputError);
  EXPECT_THROW(VideoWriter(video.path(), cv::Size(320, 240), 0.0), InputError);
  EXPECT_THROW(VideoWriter(video.path(), cv::Size(320, 240), std::nan("")), InputError);
}

TEST(VideoWriter, RefusesFramesThatDoNotFit) {
  const TempVideo video;
  VideoWriter writer(video.path(), cv::Size(64, 48), 30.0);
  EXPECT_THROW(writer.Write(cv::Mat(48, 66, CV_8UC1, cv::Scalar(0))), std::invalid_argument);
  EXPECT_THROW(writer.Write(cv::Mat(48, 64, CV_16UC1, cv::Scalar(0))), std::invalid_argument);
  EXPECT_THROW(writer.Write(cv::Mat(48, 64, CV_8UC4, cv::Scalar::all(0))), std::invalid_argument);
  EXPECT_THROW(writer.Write(cv::Mat()), std::invalid_argument);
  writer.Write(cv::Mat(48, 64, CV_8UC3, cv::Scalar::all(90)));  // converted to grey
  EXPECT_EQ(writer.frames_written(), 1);
  writer.Close();
  writer.Close();  // closing twice is harmless
  EXPECT_THROW(writer.Write(cv::Mat(48, 64, CV_8UC1, cv::Scalar(0))), std::logic_error);
  EXPECT_EQ(ReadGrey(video.path()).size(), 1u);
}

}  // namespace
}  // namespace tumbletrace
