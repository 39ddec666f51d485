// overlay.mp4: read back frame by frame, the drawn marks sit where the fit puts them — the
// blue CM disc at the fitted CM's projection, each red cross at the predicted marker pixel,
// each green circle round its detection — and the frames outside the window are dimmed
// without predictions.
#include "tumbletrace/report/overlay.hpp"

#include <gtest/gtest.h>

#include <fmt/format.h>

#include <filesystem>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/videoio.hpp>

#include "support/fit_helpers.hpp"
#include "support/scenarios.hpp"
#include "support/temp_dir.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

enum class Channel { kBlue, kGreen, kRed };

// Centroid of the pixels of one pure colour within `half` px of `around` (false: none).
bool ColourCentroid(const cv::Mat& bgr, Channel channel, const Eigen::Vector2d& around, int half,
                    Eigen::Vector2d* centroid, int* count = nullptr) {
  Eigen::Vector2d sum = Eigen::Vector2d::Zero();
  int n = 0;
  const int c = channel == Channel::kBlue ? 0 : channel == Channel::kGreen ? 1 : 2;
  for (int y = std::max(0, int(around.y()) - half); y <= std::min(bgr.rows - 1, int(around.y()) + half); ++y) {
    for (int x = std::max(0, int(around.x()) - half); x <= std::min(bgr.cols - 1, int(around.x()) + half); ++x) {
      const cv::Vec3b v = bgr.at<cv::Vec3b>(y, x);
      bool hit = v[c] > 150;
      for (int o = 0; o < 3; ++o) hit = hit && (o == c || v[o] < 100);
      if (hit) {
        sum += Eigen::Vector2d(x, y);
        ++n;
      }
    }
  }
  if (count) *count = n;
  if (n == 0) return false;
  *centroid = sum / n;
  return true;
}

class OverlayTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    scenario_ = std::make_unique<Scenario>(testing::PlanarSpinScenario(0.2, 41));
    recovery_ = std::make_unique<testing::Recovery>(
        testing::SimulateAndFit(*scenario_, testing::DefaultFitOptions(*scenario_)));
  }
  static void TearDownTestSuite() {
    recovery_.reset();
    scenario_.reset();
  }
  // A clip of dark frames first..last (a folder of PNGs), the camera's size.
  static void WriteDarkClip(const fs::path& dir, int first, int last) {
    fs::create_directories(dir);
    const cv::Mat dark(scenario_->camera.intrinsics.height_px, scenario_->camera.intrinsics.width_px, CV_8U, cv::Scalar(20));
    for (int f = first; f <= last; ++f) cv::imwrite((dir / fmt::format("frame_{:05d}.png", f)).string(), dark);
  }
  OverlayInput Input(const fs::path& clip, int first, int last) const {
    OverlayInput input;
    input.clip = clip;
    input.camera = scenario_->camera;
    input.capture_fps = scenario_->capture_fps;
    input.parameters = &recovery_->fit.parameters;
    input.markers = scenario_->body.markers;
    input.detections = recovery_->sim.tracks;
    input.first_frame = first;
    input.last_frame = last;
    return input;
  }
  static std::unique_ptr<Scenario> scenario_;
  static std::unique_ptr<testing::Recovery> recovery_;
};
std::unique_ptr<Scenario> OverlayTest::scenario_;
std::unique_ptr<testing::Recovery> OverlayTest::recovery_;

TEST_F(OverlayTest, MarksSitAtTheFittedProjectionsAndOutsideFramesAreDimmed) {
  testing::TempDir dir("overlay");
  const int clip_first = 100, clip_last = 129, first = 105, last = 124;
  WriteDarkClip(dir.path() / "clip", clip_first, clip_last);
  const OverlayInput input = Input(dir.path() / "clip", first, last);
  WriteOverlayVideo(input, dir.path() / "overlay.mp4");
  ASSERT_TRUE(fs::exists(dir.path() / "overlay.mp4"));
  EXPECT_FALSE(fs::exists(dir.path() / "overlay.partial.mp4"));

  cv::VideoCapture video((dir.path() / "overlay.mp4").string());
  ASSERT_TRUE(video.isOpened());
  EXPECT_EQ(static_cast<int>(video.get(cv::CAP_PROP_FRAME_COUNT)), clip_last - clip_first + 1);
  cv::Mat bgr;
  int checked_markers = 0;
  for (int f = clip_first; f <= clip_last; ++f) {
    ASSERT_TRUE(video.read(bgr)) << "frame " << f;
    ASSERT_EQ(bgr.type(), CV_8UC3);
    Eigen::Vector2d cm, seen;
    ASSERT_TRUE(CmPixel(input, f, &cm));
    const bool inside = f >= first && f <= last;
    if (!inside) {
      int n = 0;
      ColourCentroid(bgr, Channel::kBlue, cm, 8, &seen, &n);
      EXPECT_EQ(n, 0) << "frame " << f << ": no CM outside the window";
      // The dark background (20 grey levels) is dimmed to 8.
      EXPECT_LT(bgr.at<cv::Vec3b>(bgr.rows - 5, 5)[1], 14) << "frame " << f;
      continue;
    }
    EXPECT_GT(bgr.at<cv::Vec3b>(bgr.rows - 5, 5)[1], 14) << "frame " << f;
    if ((f - first) % 5 != 0) continue;  // a sample of the frames
    ASSERT_TRUE(ColourCentroid(bgr, Channel::kBlue, cm, 8, &seen)) << "frame " << f;
    EXPECT_LT((seen - cm).norm(), 1.0) << "frame " << f << ": CM drawn at " << seen.transpose()
                                       << ", fitted " << cm.transpose();
    const double t = f / scenario_->capture_fps;
    for (const Marker& m : scenario_->body.markers) {
      Eigen::Vector2d predicted;
      ASSERT_TRUE(recovery_->fit.parameters.PredictPixel(scenario_->camera, m.at_body_m, t, &predicted));
      if ((predicted - cm).norm() < 14) continue;  // the CM's disc covers part of the cross
      ASSERT_TRUE(ColourCentroid(bgr, Channel::kRed, predicted, 7, &seen)) << "frame " << f;
      EXPECT_LT((seen - predicted).norm(), 1.5) << "frame " << f << " marker " << m.id;
      ++checked_markers;
    }
  }
  EXPECT_GE(checked_markers, 12);
}

TEST_F(OverlayTest, DetectionsAreCircledWhereTheyWereSeen) {
  testing::TempDir dir("overlay_detections");
  WriteDarkClip(dir.path() / "clip", 100, 101);
  OverlayInput input = Input(dir.path() / "clip", 200, 210);  // no predictions in these frames
  input.detections.clear();
  for (const TrackPoint& p : recovery_->sim.tracks) {
    if (p.frame == 100) input.detections.push_back(p);
  }
  ASSERT_GE(input.detections.size(), 4u);
  WriteOverlayVideo(input, dir.path() / "overlay.mp4");
  cv::VideoCapture video((dir.path() / "overlay.mp4").string());
  cv::Mat bgr;
  ASSERT_TRUE(video.read(bgr));
  for (const TrackPoint& p : input.detections) {
    // The ring's centroid is its centre; a dimmed frame still shows the ring in full colour.
    Eigen::Vector2d seen;
    ASSERT_TRUE(ColourCentroid(bgr, Channel::kGreen, {p.x_px, p.y_px}, 9, &seen));
    EXPECT_LT((seen - Eigen::Vector2d(p.x_px, p.y_px)).norm(), 1.5) << "marker " << p.marker.value_or(-1);
  }
}

TEST_F(OverlayTest, MissingClipIsBadInputNamingIt) {
  testing::TempDir dir("overlay_missing");
  try {
    WriteOverlayVideo(Input(dir.path() / "no_clip", 0, 1), dir.path() / "overlay.mp4");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("no_clip"), std::string::npos);
  }
  EXPECT_FALSE(fs::exists(dir.path() / "overlay.mp4"));
}

}  // namespace
}  // namespace tumbletrace
