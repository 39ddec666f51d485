#include "tumbletrace/detect/marker_detector.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <memory>
#include <limits>
#include <opencv2/imgproc.hpp>
#include <random>
#include <string>
#include <utility>
#include <vector>

#include "support/scenarios.hpp"
#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/clip/video_writer.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/sim/render.hpp"
#include "tumbletrace/sim/simulate.hpp"

namespace tumbletrace {
namespace {

// A simulated throw with sensor noise and a short exposure (blur well under 2 px).
Simulation NoisyBlurredFlight(Scenario scenario) {
  scenario.exposure_s = 0.0002;
  scenario.image_sigma_levels = 2.0;
  return SimulateFlight(scenario);
}

// 20 frames spread over the flight.
std::vector<int> SpreadFrames(const Simulation& sim) {
  std::vector<int> frames;
  const int count = static_cast<int>(sim.frames.size());
  for (int i = 0; i < 20; ++i) frames.push_back((2 * i + 1) * count / 40);
  return frames;
}

struct Matching {
  int visible = 0;
  int matched = 0;
  int false_detections = 0;
  double sum_squared_error_px2 = 0.0;
};

// Each visible marker takes the nearest detection within 2 px; detections near no visible
// marker are false.
void Match(const FrameTruth& truth, const std::vector<Detection>& detections, Matching* m) {
  constexpr double kMatchPx = 2.0;
  std::vector<bool> used(detections.size(), false);
  for (const MarkerTruth& marker : truth.markers) {
    if (!marker.visible) continue;
    ++m->visible;
    int best = -1;
    double best_distance = kMatchPx;
    for (std::size_t i = 0; i < detections.size(); ++i) {
      const double distance = (detections[i].center_px - marker.pixel).norm();
      if (distance < best_distance) {
        best_distance = distance;
        best = static_cast<int>(i);
      }
    }
    if (best < 0) continue;
    ++m->matched;
    used[best] = true;
    m->sum_squared_error_px2 += best_distance * best_distance;
  }
  for (bool u : used) m->false_detections += u ? 0 : 1;
}

// Centre rms (radial) of full-frame detection over 20 frames of the scenario.
void ExpectAccurate(const Scenario& scenario, const char* name) {
  const Simulation sim = NoisyBlurredFlight(scenario);
  MarkerDetector detector{DetectorOptions{}};
  Matching m;
  for (int frame : SpreadFrames(sim)) {
    const std::vector<Detection> detections = detector.Detect(RenderSimulatedFrame(sim, frame));
    Match(sim.frames[frame], detections, &m);
    for (const Detection& d : detections) {
      EXPECT_GE(d.elongation, 1.0);
      EXPECT_GT(d.quality, 0.0);
      EXPECT_LE(d.quality, 1.0);
      EXPECT_GT(d.signal, d.peak);
    }
  }
  ASSERT_GT(m.visible, 100);
  EXPECT_EQ(m.matched, m.visible) << name;
  EXPECT_EQ(m.false_detections, 0) << name;
  const double rms_px = std::sqrt(m.sum_squared_error_px2 / m.matched);
  EXPECT_LT(rms_px, 0.15) << name;
  ::testing::Test::RecordProperty(std::string(name) + "_centre_rms_px", std::to_string(rms_px));
  EXPECT_NEAR(detector.noise_sigma(), 2.0, 0.2) << name;
}

TEST(MarkerDetector, FindsEveryVisibleDotOfAFacingThrowAccurately) {
  ExpectAccurate(testing::PlanarSpinScenario(), "planar");
}

TEST(MarkerDetector, FindsEveryVisibleDotOfAnObliqueThrowAccurately) {
  ExpectAccurate(testing::ObliqueSpinScenario(), "oblique");
}

// Boxes of +-half px around the true pixels of the given markers.
std::vector<cv::Rect> BoxesAround(const FrameTruth& truth, const std::vector<int>& ids, int half) {
  std::vector<cv::Rect> boxes;
  for (const MarkerTruth& marker : truth.markers) {
    if (std::find(ids.begin(), ids.end(), marker.id) == ids.end()) continue;
    const int x = static_cast<int>(std::lround(marker.pixel.x()));
    const int y = static_cast<int>(std::lround(marker.pixel.y()));
    boxes.emplace_back(x - half, y - half, 2 * half + 1, 2 * half + 1);
  }
  return boxes;
}

// The same detections, in any order.
void ExpectSameDetections(std::vector<Detection> a, std::vector<Detection> b) {
  ASSERT_EQ(a.size(), b.size());
  const auto raster = [](const Detection& p, const Detection& q) {
    return std::pair(p.center_px.y(), p.center_px.x()) <
           std::pair(q.center_px.y(), q.center_px.x());
  };
  std::sort(a.begin(), a.end(), raster);
  std::sort(b.begin(), b.end(), raster);
  for (std::size_t i = 0; i < a.size(); ++i) {
    EXPECT_NEAR(a[i].center_px.x(), b[i].center_px.x(), 1e-9);
    EXPECT_NEAR(a[i].center_px.y(), b[i].center_px.y(), 1e-9);
    EXPECT_NEAR(a[i].elongation, b[i].elongation, 1e-9);
    EXPECT_EQ(a[i].area_px, b[i].area_px);
  }
}

// The detection of `full` nearest to p (within 2 px), or nullptr.
const Detection* Nearest(const std::vector<Detection>& full, const Eigen::Vector2d& p) {
  const Detection* best = nullptr;
  double best_distance = 2.0;
  for (const Detection& d : full) {
    const double distance = (d.center_px - p).norm();
    if (distance < best_distance) {
      best_distance = distance;
      best = &d;
    }
  }
  return best;
}

TEST(MarkerDetector, RegionsGiveTheFullFrameCentresAndIgnoreDotsOutside) {
  const Simulation sim = NoisyBlurredFlight(testing::ObliqueSpinScenario());
  for (int frame : {20, 130, 240}) {
    const cv::Mat image = RenderSimulatedFrame(sim, frame);
    const FrameTruth& truth = sim.frames[frame];
    MarkerDetector full_detector{DetectorOptions{}};
    const std::vector<Detection> full = full_detector.Detect(image);
    MarkerDetector region_detector{DetectorOptions{}};  // first call: a region call
    std::vector<cv::Rect> regions = BoxesAround(truth, {1, 2, 5}, 12);
    // An overlapping duplicate: its dot must be reported once.
    regions.push_back(regions.front() + cv::Point(4, -3));
    const std::vector<Detection> in_regions = region_detector.Detect(image, regions);
    EXPECT_EQ(region_detector.noise_sigma(), full_detector.noise_sigma());
    ASSERT_EQ(in_regions.size(), 3u) << "frame " << frame;
    for (const Detection& d : in_regions) {
      const Detection* same = Nearest(full, d.center_px);
      ASSERT_NE(same, nullptr);
      EXPECT_NEAR(d.center_px.x(), same->center_px.x(), 1e-9);
      EXPECT_NEAR(d.center_px.y(), same->center_px.y(), 1e-9);
      EXPECT_EQ(d.area_px, same->area_px);
      EXPECT_NEAR(d.signal, same->signal, 1e-9 * same->signal);
      EXPECT_NEAR(d.quality, same->quality, 1e-12);
      // Only the dots of the regions.
      const Eigen::Vector2d& dot3 = truth.markers[2].pixel;
      EXPECT_GT((d.center_px - dot3).norm(), 5.0);
    }
  }
}

TEST(MarkerDetector, RegionsAtAndBeyondTheImageEdgeAreClipped) {
  const Simulation sim = NoisyBlurredFlight(testing::PlanarSpinScenario());
  const cv::Mat image = RenderSimulatedFrame(sim, 100);
  MarkerDetector detector{DetectorOptions{}};
  const std::vector<cv::Rect> outside = {cv::Rect(-50, -50, 30, 30), cv::Rect(2000, 10, 30, 30),
                                         cv::Rect(1010, 750, 40, 40), cv::Rect(5, 5, 0, 10)};
  EXPECT_TRUE(detector.Detect(image, outside).empty());
  // One region covering the frame and more: the full-frame result.
  const std::vector<Detection> full = detector.Detect(image);
  EXPECT_EQ(full.size(), 6u);
  ExpectSameDetections(detector.Detect(image, {cv::Rect(-10, -10, 1100, 800)}), full);
}

TEST(MarkerDetector, DarkDotsOnALightObject) {
  const Simulation sim = NoisyBlurredFlight(testing::ObliqueSpinScenario());
  const cv::Mat bright = RenderSimulatedFrame(sim, 60);
  cv::Mat dark;
  cv::subtract(cv::Scalar::all(255), bright, dark);
  DetectorOptions options;
  options.dark_dots = true;
  MarkerDetector dark_detector(options);
  const std::vector<Detection> from_dark = dark_detector.Detect(dark);
  MarkerDetector bright_detector{DetectorOptions{}};
  ExpectSameDetections(from_dark, bright_detector.Detect(bright));
  Matching m;
  Match(sim.frames[60], from_dark, &m);
  EXPECT_EQ(m.visible, 6);
  EXPECT_EQ(m.matched, 6);
  EXPECT_EQ(m.false_detections, 0);
  // Looking for bright dots in the dark-dot frame finds none of the markers.
  MarkerDetector wrong_polarity{DetectorOptions{}};
  Matching wrong;
  Match(sim.frames[60], wrong_polarity.Detect(dark), &wrong);
  EXPECT_EQ(wrong.matched, 0);
}

TEST(MarkerDetector, SixteenBitInputGivesTheSameCentres) {
  const Simulation sim = NoisyBlurredFlight(testing::PlanarSpinScenario());
  const cv::Mat eight = RenderSimulatedFrame(sim, 150);
  cv::Mat sixteen;
  eight.convertTo(sixteen, CV_16U, 256.0);
  MarkerDetector detector8{DetectorOptions{}};
  MarkerDetector detector16{DetectorOptions{}};
  const std::vector<Detection> d8 = detector8.Detect(eight);
  const std::vector<Detection> d16 = detector16.Detect(sixteen);
  EXPECT_EQ(d8.size(), 6u);
  ExpectSameDetections(d16, d8);
  EXPECT_DOUBLE_EQ(detector16.noise_sigma(), 256.0 * detector8.noise_sigma());
  for (std::size_t i = 0; i < d8.size() && i < d16.size(); ++i) {
    EXPECT_NEAR(d16[i].signal, 256.0 * d8[i].signal, 1e-9 * d16[i].signal);
    EXPECT_NEAR(d16[i].quality, d8[i].quality, 1e-12);
  }
}

// A background frame (ramp and noise, no body) with the given instants.
cv::Mat Render(const std::vector<SceneInstant>& exposure, std::uint64_t seed) {
  RenderSettings settings;
  settings.noise_sigma_levels = 2.0;
  settings.noise_seed = seed;
  return RenderFrame(exposure, settings);
}

RenderedDot Dot(double x, double y, double radius_px) {
  RenderedDot dot;
  dot.center_px = Eigen::Vector2d(x, y);
  dot.shape_px2 = radius_px * radius_px * Eigen::Matrix2d::Identity();
  return dot;
}

TEST(MarkerDetector, RejectsStreaksHotPixelsAndLargeAreas) {
  // A still dot (the control) and a dot that crosses 20 px during the exposure (a streak).
  std::vector<SceneInstant> exposure(40);
  for (int k = 0; k < 40; ++k) {
    exposure[k].dots.push_back(Dot(300.3, 200.6, 2.0));
    exposure[k].dots.push_back(Dot(500.0 + 20.0 * k / 39.0, 400.0 + 3.0 * k / 39.0, 1.5));
  }
  cv::Mat image = Render(exposure, 7);
  image.at<std::uint8_t>(600, 150) = 250;  // a hot pixel
  DetectorOptions options;
  options.background_radius_px = 32;
  cv::circle(image, cv::Point(800, 300), 28, cv::Scalar(200), cv::FILLED);  // ~2460 px

  MarkerDetector detector(options);
  const std::vector<Detection> found = detector.Detect(image);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_NEAR(found[0].center_px.x(), 300.3, 0.05);
  EXPECT_NEAR(found[0].center_px.y(), 200.6, 0.05);
  EXPECT_LT(found[0].elongation, 1.1);

  // Each is found when its limit is lifted: it was rejected for that reason alone.
  DetectorOptions lifted = options;
  lifted.max_elongation = std::numeric_limits<double>::infinity();
  MarkerDetector any_shape(lifted);
  EXPECT_NE(Nearest(any_shape.Detect(image), Eigen::Vector2d(510, 401.5)), nullptr);
  lifted = options;
  lifted.min_area_px = 1.0;
  MarkerDetector any_size(lifted);
  EXPECT_NE(Nearest(any_size.Detect(image), Eigen::Vector2d(150, 600)), nullptr);
  lifted = options;
  lifted.max_area_px = 5000.0;
  MarkerDetector any_area(lifted);
  EXPECT_NE(Nearest(any_area.Detect(image), Eigen::Vector2d(800, 300)), nullptr);
}

// Polygon of the rectangle of the given size centred at c, turned by angle_rad.
std::vector<Eigen::Vector2d> Box(const Eigen::Vector2d& c, double length, double width,
                                 double angle_rad) {
  const Eigen::Vector2d u(std::cos(angle_rad), std::sin(angle_rad));
  const Eigen::Vector2d v(-u.y(), u.x());
  return {c - 0.5 * length * u - 0.5 * width * v, c + 0.5 * length * u - 0.5 * width * v,
          c + 0.5 * length * u + 0.5 * width * v, c - 0.5 * length * u + 0.5 * width * v};
}

// The hammer's handle is 13 px wide and its head 14 px: with the default disc both are
// background, their corners are no dots, and the dots on them are found.
TEST(MarkerDetector, DotsOnANarrowBodyAndNoneAtItsCorners) {
  std::vector<SceneInstant> exposure(1);
  const Eigen::Vector2d handle_centre(400.0, 300.0);
  const double angle_rad = 0.4;
  exposure[0].silhouette_polygons_px = {Box(handle_centre, 130.0, 13.0, angle_rad),
                                        Box(Eigen::Vector2d(600.0, 500.0), 37.0, 14.0, -1.1)};
  const Eigen::Vector2d along(std::cos(angle_rad), std::sin(angle_rad));
  std::vector<Eigen::Vector2d> dots;
  for (double t : {-50.0, -10.0, 30.0}) dots.push_back(handle_centre + t * along);
  dots.emplace_back(600.3, 500.2);
  for (const Eigen::Vector2d& p : dots) exposure[0].dots.push_back(Dot(p.x(), p.y(), 1.9));
  const cv::Mat image = Render(exposure, 13);

  MarkerDetector detector{DetectorOptions{}};
  const std::vector<Detection> found = detector.Detect(image);
  EXPECT_EQ(found.size(), dots.size());
  for (const Eigen::Vector2d& p : dots) {
    const Detection* d = Nearest(found, p);
    ASSERT_NE(d, nullptr);
    EXPECT_LT((d->center_px - p).norm(), 0.1);
  }
  // Without any dot, nothing.
  exposure[0].dots.clear();
  MarkerDetector plain{DetectorOptions{}};
  EXPECT_TRUE(plain.Detect(Render(exposure, 14)).empty());
}

TEST(MarkerDetector, AreaWiderThanTheBackgroundDiscIsBackground) {
  cv::Mat image = Render({}, 11);
  cv::circle(image, cv::Point(400, 400), 20, cv::Scalar(200), cv::FILLED);
  MarkerDetector detector{DetectorOptions{}};
  EXPECT_TRUE(detector.Detect(image).empty());
}

TEST(MarkerDetector, FrameWithoutMarkersGivesNothing) {
  for (std::uint64_t seed : {1, 2, 3}) {
    const cv::Mat image = Render({}, seed);
    MarkerDetector detector{DetectorOptions{}};
    EXPECT_TRUE(detector.Detect(image).empty()) << "seed " << seed;
    EXPECT_NEAR(detector.noise_sigma(), 2.0, 0.2);
  }
  // Noise-free: the noise is taken at its floor; without the floor, the threshold's own
  // floor of one grey level keeps the flat frame empty.
  RenderSettings clean;
  clean.noise_sigma_levels = 0.0;
  const cv::Mat flat = RenderFrame({}, clean);
  MarkerDetector detector{DetectorOptions{}};
  EXPECT_TRUE(detector.Detect(flat).empty());
  EXPECT_EQ(detector.noise_sigma(), DetectorOptions{}.min_noise_sigma_levels);
  DetectorOptions no_floor;
  no_floor.min_noise_sigma_levels = 0.0;
  MarkerDetector unfloored(no_floor);
  EXPECT_TRUE(unfloored.Detect(flat).empty());
  EXPECT_LT(unfloored.noise_sigma(), 0.1);
}

// A temporary file name unique to the test and the process; the file is removed after.
class TempFile {
 public:
  explicit TempFile(const std::string& extension) {
    const ::testing::TestInfo* test = ::testing::UnitTest::GetInstance()->current_test_info();
    path_ = std::filesystem::temp_directory_path() /
            ("tumbletrace_" + std::string(test->name()) + "_" + std::to_string(::getpid()) +
             extension);
  }
  ~TempFile() {
    std::error_code ignored;
    std::filesystem::remove(path_, ignored);
  }
  const std::filesystem::path& path() const { return path_; }

 private:
  std::filesystem::path path_;
};

// Lossy video (H.264, as the simulator writes clip.mp4) has no noise left in flat areas and
// rings around dots and corners: the noise floor and the centroid's pedestal keep the
// detections clean and close.
TEST(MarkerDetector, DotsInH264VideoAreFoundWithoutFalseOnes) {
  const Simulation sim = NoisyBlurredFlight(testing::ObliqueSpinScenario());
  constexpr int kFirst = 100;
  constexpr int kCount = 40;
  const TempFile clip(".mp4");
  {
    VideoWriter writer(clip.path(), cv::Size(1024, 768), 30.0);
    for (int f = kFirst; f < kFirst + kCount; ++f) writer.Write(RenderSimulatedFrame(sim, f));
    writer.Close();
  }
  std::unique_ptr<FrameSource> source = OpenClip(clip.path());
  MarkerDetector detector{DetectorOptions{}};
  Matching m;
  Frame frame;
  int read = 0;
  while (source->Next(&frame)) {
    Match(sim.frames[kFirst + frame.index], detector.Detect(frame.image), &m);
    ++read;
  }
  ASSERT_EQ(read, kCount);
  EXPECT_EQ(detector.noise_sigma(), DetectorOptions{}.min_noise_sigma_levels);
  EXPECT_EQ(m.matched, m.visible);
  EXPECT_EQ(m.false_detections, 0);
  const double rms_px = std::sqrt(m.sum_squared_error_px2 / m.matched);
  EXPECT_LT(rms_px, 0.15);  // the H.264 writer itself moves centroids by about 0.085 px rms
  ::testing::Test::RecordProperty("h264_centre_rms_px", std::to_string(rms_px));
}

TEST(MarkerDetector, DotsCutByTheFrameEdgeAreNotReported) {
  std::vector<SceneInstant> exposure(1);
  exposure[0].dots = {Dot(0.5, 300.0, 2.5), Dot(1023.0, 100.0, 2.5), Dot(400.0, 767.2, 2.5),
                      Dot(200.0, 300.0, 2.5)};
  MarkerDetector detector{DetectorOptions{}};
  const std::vector<Detection> found = detector.Detect(Render(exposure, 5));
  ASSERT_EQ(found.size(), 1u);
  EXPECT_NEAR(found[0].center_px.x(), 200.0, 0.05);
}

TEST(MarkerDetector, ExplicitThresholdIsUsed) {
  std::vector<SceneInstant> exposure(1);
  RenderedDot faint = Dot(300.0, 300.0, 2.5);
  faint.intensity = 0.0;  // at the body level, 30 grey levels above the background
  exposure[0].dots = {faint, Dot(600.0, 300.0, 2.5)};
  const cv::Mat image = Render(exposure, 9);
  DetectorOptions options;
  options.threshold = 60.0;
  MarkerDetector detector(options);
  EXPECT_EQ(detector.Detect(image).size(), 1u);
  MarkerDetector automatic{DetectorOptions{}};
  EXPECT_EQ(automatic.Detect(image).size(), 2u);
}

TEST(MarkerDetector, CopiesDetectAlike) {
  const Simulation sim = NoisyBlurredFlight(testing::PlanarSpinScenario());
  const cv::Mat image = RenderSimulatedFrame(sim, 40);
  MarkerDetector original{DetectorOptions{}};
  const std::vector<Detection> first = original.Detect(image);
  MarkerDetector copy = original;
  ExpectSameDetections(copy.Detect(image, BoxesAround(sim.frames[40], {1, 2, 3, 4, 5, 6}, 15)),
                       first);
  ExpectSameDetections(original.Detect(image), first);
}

TEST(DetectionBackground, EqualsOpenCvOpeningAndClosing) {
  std::mt19937_64 rng(3);
  for (int type : {CV_8U, CV_16U}) {
    for (const cv::Size size : {cv::Size(53, 37), cv::Size(1, 9), cv::Size(7, 1)}) {
      cv::Mat image(size, type);
      std::uniform_int_distribution<int> level(0, type == CV_8U ? 255 : 65535);
      for (int y = 0; y < image.rows; ++y) {
        for (int x = 0; x < image.cols; ++x) {
          if (type == CV_8U) {
            image.at<std::uint8_t>(y, x) = static_cast<std::uint8_t>(level(rng));
          } else {
            image.at<std::uint16_t>(y, x) = static_cast<std::uint16_t>(level(rng));
          }
        }
      }
      for (int radius : {1, 2, 3, 4, 7, 12, 25}) {
        const cv::Mat disc = cv::getStructuringElement(
            cv::MORPH_ELLIPSE, cv::Size(2 * radius + 1, 2 * radius + 1));
        for (bool dark : {false, true}) {
          cv::Mat expected;
          cv::morphologyEx(image, expected, dark ? cv::MORPH_CLOSE : cv::MORPH_OPEN, disc);
          const cv::Mat got = DetectionBackground(image, radius, dark);
          ASSERT_EQ(got.type(), image.type());
          EXPECT_EQ(cv::norm(got, expected, cv::NORM_INF), 0.0)
              << "type " << type << " size " << size << " radius " << radius << " dark " << dark;
        }
      }
    }
  }
  EXPECT_THROW(DetectionBackground(cv::Mat(5, 5, CV_8U), 0, false), InputError);
}

TEST(MarkerDetector, RefusesBadOptions) {
  std::vector<DetectorOptions> bad(15);
  bad[0].threshold = 0.0;
  bad[1].threshold = std::numeric_limits<double>::quiet_NaN();
  bad[2].threshold_sigma = -1.0;
  bad[3].min_area_px = 0.0;
  bad[4].max_area_px = 2.0;  // below min_area_px
  bad[5].max_elongation = 0.9;
  bad[6].background_radius_px = 0;
  bad[7].background_radius_px = 1000;
  bad[8].min_area_px = std::numeric_limits<double>::infinity();
  bad[9].min_noise_sigma_levels = -0.5;
  bad[10].min_outline_radius_px = 1.0;
  bad[11].max_outline_elongation = 0.5;
  bad[12].min_completeness = 1.2;
  bad[13].incomplete_bias_of_radius = -0.1;
  bad[14].min_outline_radius_px = std::numeric_limits<double>::quiet_NaN();
  for (std::size_t i = 0; i < bad.size(); ++i) {
    EXPECT_FALSE(bad[i].Validate().empty()) << i;
    EXPECT_THROW(MarkerDetector{bad[i]}, InputError) << i;
  }
  EXPECT_TRUE(DetectorOptions{}.Validate().empty());
}

TEST(MarkerDetector, RefusesImagesItCannotRead) {
  MarkerDetector detector{DetectorOptions{}};
  EXPECT_THROW(detector.Detect(cv::Mat()), InputError);
  EXPECT_THROW(detector.Detect(cv::Mat(10, 10, CV_8UC3, cv::Scalar::all(0))), InputError);
  EXPECT_THROW(detector.Detect(cv::Mat(10, 10, CV_32F, cv::Scalar::all(0))), InputError);
  // Tiny but valid images are no trouble.
  EXPECT_TRUE(detector.Detect(cv::Mat(1, 1, CV_8U, cv::Scalar::all(0))).empty());
  EXPECT_TRUE(detector.Detect(cv::Mat(2, 5, CV_16U, cv::Scalar::all(7))).empty());
}

}  // namespace
}  // namespace tumbletrace
