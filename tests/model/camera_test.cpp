#include "tumbletrace/model/camera.hpp"

#include <ceres/jet.h>
#include <gtest/gtest.h>
#include <unistd.h>

#include <Eigen/Geometry>
#include <filesystem>
#include <fstream>
#include <functional>
#include <opencv2/calib3d.hpp>
#include <opencv2/core.hpp>
#include <numbers>
#include <random>

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

bool Contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

// A realistic calibration with all five distortion terms non-zero.
CameraIntrinsics TestIntrinsics() {
  CameraIntrinsics k;
  k.width_px = 1024;
  k.height_px = 768;
  k.fx_px = 1412.5;
  k.fy_px = 1408.25;
  k.cx_px = 517.3;
  k.cy_px = 379.9;
  k.distortion = {-0.12, 0.05, 3e-4, -2e-4, -0.01};
  return k;
}

// Points in view: a pixel anywhere in the image, back-projected without distortion to a
// depth of 0.3 to 8 m.
std::vector<Eigen::Vector3d> PointsInView(const CameraIntrinsics& k, int count, unsigned seed) {
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> u(0.0, k.width_px - 1.0), v(0.0, k.height_px - 1.0),
      depth(0.3, 8.0);
  std::vector<Eigen::Vector3d> points;
  for (int i = 0; i < count; ++i) {
    const double z = depth(rng);
    points.emplace_back((u(rng) - k.cx_px) / k.fx_px * z, (v(rng) - k.cy_px) / k.fy_px * z, z);
  }
  return points;
}

cv::Mat CameraMatrix(const CameraIntrinsics& k) {
  return (cv::Mat_<double>(3, 3) << k.fx_px, 0, k.cx_px, 0, k.fy_px, k.cy_px, 0, 0, 1);
}

cv::Mat Distortion(const CameraIntrinsics& k) {
  return (cv::Mat_<double>(1, 5) << k.distortion[0], k.distortion[1], k.distortion[2],
          k.distortion[3], k.distortion[4]);
}

// Reference: OpenCV calib3d projectPoints, an independent implementation of the same model.
TEST(CameraTest, ProjectionMatchesOpenCvProjectPoints) {
  const CameraIntrinsics k = TestIntrinsics();
  const std::vector<Eigen::Vector3d> points = PointsInView(k, 2000, 20240601u);
  std::vector<cv::Point3d> object_points;
  for (const Eigen::Vector3d& p : points) object_points.emplace_back(p.x(), p.y(), p.z());
  std::vector<cv::Point2d> image_points;
  cv::projectPoints(object_points, cv::Vec3d(0, 0, 0), cv::Vec3d(0, 0, 0), CameraMatrix(k),
                    Distortion(k), image_points);
  for (size_t i = 0; i < points.size(); ++i) {
    Eigen::Vector2d pixel;
    ASSERT_TRUE(ProjectCameraPoint(k, points[i].data(), pixel.data()));
    EXPECT_NEAR(pixel.x(), image_points[i].x, 1e-9) << "point " << i;
    EXPECT_NEAR(pixel.y(), image_points[i].y, 1e-9) << "point " << i;
  }
}

// Reference: OpenCV calib3d projectPoints with the camera's pose as rvec, tvec.
TEST(CameraTest, WorldProjectionMatchesOpenCvWithPose) {
  Camera camera;
  camera.intrinsics = TestIntrinsics();
  const Eigen::AngleAxisd angle_axis(0.7, Eigen::Vector3d(0.3, -1.0, 0.4).normalized());
  RigidTransform camera_from_world;
  camera_from_world.rotation = angle_axis.toRotationMatrix();
  camera_from_world.translation_m = Eigen::Vector3d(0.2, -0.1, 3.0);
  camera.camera_from_world = camera_from_world;

  const RigidTransform world_from_camera = camera_from_world.Inverse();
  std::vector<cv::Point3d> object_points;
  std::vector<Eigen::Vector3d> points_world;
  for (const Eigen::Vector3d& p_camera : PointsInView(camera.intrinsics, 500, 7u)) {
    points_world.push_back(world_from_camera.Apply(p_camera));
    object_points.emplace_back(points_world.back().x(), points_world.back().y(),
                               points_world.back().z());
  }
  const Eigen::Vector3d rvec = angle_axis.angle() * angle_axis.axis();
  const Eigen::Vector3d& t = camera_from_world.translation_m;
  std::vector<cv::Point2d> image_points;
  cv::projectPoints(object_points, cv::Vec3d(rvec.x(), rvec.y(), rvec.z()),
                    cv::Vec3d(t.x(), t.y(), t.z()), CameraMatrix(camera.intrinsics),
                    Distortion(camera.intrinsics), image_points);
  for (size_t i = 0; i < points_world.size(); ++i) {
    Eigen::Vector2d pixel;
    ASSERT_TRUE(ProjectWorldPoint(camera, points_world[i], &pixel));
    EXPECT_NEAR(pixel.x(), image_points[i].x, 1e-9) << "point " << i;
    EXPECT_NEAR(pixel.y(), image_points[i].y, 1e-9) << "point " << i;
  }
}

TEST(CameraTest, WithoutPoseTheCameraFrameIsTheWorld) {
  Camera camera;
  camera.intrinsics = TestIntrinsics();
  const Eigen::Vector3d p(0.1, -0.2, 2.0);
  Eigen::Vector2d from_world, from_camera;
  ASSERT_TRUE(ProjectWorldPoint(camera, p, &from_world));
  ASSERT_TRUE(ProjectCameraPoint(camera.intrinsics, p.data(), from_camera.data()));
  EXPECT_EQ(from_world, from_camera);
}

TEST(CameraTest, PointsBehindOrOnThePlaneAreRefused) {
  const CameraIntrinsics k = TestIntrinsics();
  Eigen::Vector2d pixel;
  const Eigen::Vector3d behind(0.1, 0.1, -1.0), on_plane(0.1, 0.1, 0.0);
  EXPECT_FALSE(ProjectCameraPoint(k, behind.data(), pixel.data()));
  EXPECT_FALSE(ProjectCameraPoint(k, on_plane.data(), pixel.data()));
}

// The Jet instantiation (what Ceres differentiates) gives the same value as double, and a
// derivative that matches central differences.
TEST(CameraTest, JetDerivativeMatchesCentralDifferences) {
  using Jet = ceres::Jet<double, 3>;
  const CameraIntrinsics k = TestIntrinsics();
  for (const Eigen::Vector3d& p : PointsInView(k, 200, 99u)) {
    Jet p_jet[3];
    for (int i = 0; i < 3; ++i) p_jet[i] = Jet(p[i], i);
    Jet pixel_jet[2];
    ASSERT_TRUE(ProjectCameraPoint(k, p_jet, pixel_jet));
    Eigen::Vector2d pixel;
    ASSERT_TRUE(ProjectCameraPoint(k, p.data(), pixel.data()));
    // Equal to rounding: Jet divides by multiplying with the reciprocal.
    EXPECT_NEAR(pixel_jet[0].a, pixel.x(), 1e-10);
    EXPECT_NEAR(pixel_jet[1].a, pixel.y(), 1e-10);
    const double h = 1e-6 * p.z();
    for (int i = 0; i < 3; ++i) {
      Eigen::Vector3d plus = p, minus = p;
      plus[i] += h;
      minus[i] -= h;
      Eigen::Vector2d pixel_plus, pixel_minus;
      ProjectCameraPoint(k, plus.data(), pixel_plus.data());
      ProjectCameraPoint(k, minus.data(), pixel_minus.data());
      const Eigen::Vector2d numeric = (pixel_plus - pixel_minus) / (2.0 * h);
      for (int row = 0; row < 2; ++row) {
        EXPECT_NEAR(pixel_jet[row].v[i], numeric[row], 1e-6 * (1.0 + std::abs(numeric[row])))
            << "d pixel[" << row << "] / d p[" << i << "]";
      }
    }
  }
}

TEST(CameraTest, UndistortInvertsTheProjection) {
  const CameraIntrinsics k = TestIntrinsics();
  for (const Eigen::Vector3d& p : PointsInView(k, 2000, 1234u)) {
    Eigen::Vector2d pixel;
    ASSERT_TRUE(ProjectCameraPoint(k, p.data(), pixel.data()));
    const Eigen::Vector2d normalised = UndistortToNormalised(k, pixel);
    EXPECT_NEAR(normalised.x(), p.x() / p.z(), 1e-12);
    EXPECT_NEAR(normalised.y(), p.y() / p.z(), 1e-12);
    // Back to pixels: the round trip closes to 1e-9 px.
    const Eigen::Vector3d ray(normalised.x(), normalised.y(), 1.0);
    Eigen::Vector2d again;
    ASSERT_TRUE(ProjectCameraPoint(k, ray.data(), again.data()));
    EXPECT_LT((again - pixel).norm(), 1e-9);
  }
}

TEST(CameraTest, UndistortWithoutDistortionIsThePinhole) {
  CameraIntrinsics k = TestIntrinsics();
  k.distortion = {0, 0, 0, 0, 0};
  const Eigen::Vector2d normalised = UndistortToNormalised(k, Eigen::Vector2d(k.cx_px, 100.0));
  EXPECT_EQ(normalised.x(), 0.0);
  EXPECT_DOUBLE_EQ(normalised.y(), (100.0 - k.cy_px) / k.fy_px);
}

// A fresh folder per test, removed afterwards.
class CameraFileTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() /
              ("tumbletrace_camera_" + std::string(info->name()) + "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_);
  }
  void TearDown() override { fs::remove_all(folder_); }

  fs::path Write(const std::string& text) const {
    const fs::path path = folder_ / "camera.yaml";
    std::ofstream(path) << text;
    return path;
  }
  // The message of reading `text` as camera.yaml, with the folder taken off the path.
  std::string ErrorReading(const std::string& text) const {
    const fs::path path = Write(text);
    std::string message = InputErrorOf([&] { ReadCameraYaml(path); });
    const std::string prefix = (folder_ / "").string();
    if (message.rfind(prefix, 0) == 0) message.erase(0, prefix.size());
    return message;
  }

  fs::path folder_;
};

const char* const kContractCamera =
    "image_size: [1024, 768]          # width, height, px\n"
    "fx: 1400.0\n"
    "fy: 1400.0\n"
    "cx: 512.0\n"
    "cy: 384.0\n"
    "distortion: [0, 0, 0, 0, 0]      # k1 k2 p1 p2 k3 (Brown-Conrady)\n"
    "world_to_camera:\n"
    "  rotation: [[1,0,0],[0,0,-1],[0,1,0]]\n"
    "  translation_m: [0, 0, 3.0]\n"
    "sensor_window: {offset_px: [0, 0], size_px: [1024, 768]}\n";

TEST_F(CameraFileTest, ReadsTheContractExample) {
  const Camera camera = ReadCameraYaml(Write(kContractCamera));
  EXPECT_EQ(camera.intrinsics.width_px, 1024);
  EXPECT_EQ(camera.intrinsics.height_px, 768);
  EXPECT_EQ(camera.intrinsics.fx_px, 1400.0);
  EXPECT_EQ(camera.intrinsics.cx_px, 512.0);
  ASSERT_TRUE(camera.camera_from_world.has_value());
  Eigen::Matrix3d expected;
  expected << 1, 0, 0, 0, 0, -1, 0, 1, 0;
  EXPECT_TRUE(camera.camera_from_world->rotation.isApprox(expected, 1e-15));
  EXPECT_EQ(camera.camera_from_world->translation_m, Eigen::Vector3d(0, 0, 3.0));
  ASSERT_TRUE(camera.sensor_window.has_value());
}

TEST_F(CameraFileTest, SensorWindowShiftsThePrincipalPoint) {
  const Camera camera =
      ReadCameraYaml(Write("image_size: [2560, 1024]\nfx: 2000\nfy: 2000\ncx: 1280\ncy: 512\n"
                           "distortion: [-0.1, 0.02, 0, 0]\n"
                           "sensor_window: {offset_px: [960, 400], size_px: [640, 200]}\n"));
  EXPECT_EQ(camera.intrinsics.cx_px, 320.0);
  EXPECT_EQ(camera.intrinsics.cy_px, 112.0);
  // The window sets the image size; the full frame is kept for writing the file back.
  EXPECT_EQ(camera.intrinsics.width_px, 640);
  EXPECT_EQ(camera.intrinsics.height_px, 200);
  ASSERT_TRUE(camera.sensor_window.has_value());
  EXPECT_EQ(camera.sensor_window->full_size_px, Eigen::Vector2i(2560, 1024));
  EXPECT_EQ(camera.intrinsics.distortion[4], 0.0);  // four terms given: k3 = 0
  EXPECT_EQ(camera.intrinsics.distortion[1], 0.02);
  EXPECT_FALSE(camera.camera_from_world.has_value());
}

TEST_F(CameraFileTest, WriteThenReadGivesTheSameCamera) {
  Camera camera;
  camera.intrinsics = TestIntrinsics();
  camera.intrinsics.fx_px = 1412.123456789012345;
  camera.intrinsics.cx_px = 101.0 / 3.0;
  RigidTransform pose;
  pose.rotation =
      Eigen::AngleAxisd(2.1, Eigen::Vector3d(1.0, 2.0, -0.5).normalized()).toRotationMatrix();
  pose.translation_m = Eigen::Vector3d(0.1 / 3.0, -0.7, 2.9);
  camera.camera_from_world = pose;
  camera.sensor_window = SensorWindow{Eigen::Vector2d(64, 32), Eigen::Vector2i(1024, 768),
                                      Eigen::Vector2i(1280, 1024)};
  const fs::path path = folder_ / "camera.yaml";
  WriteCameraYaml(camera, path);
  const Camera back = ReadCameraYaml(path);
  EXPECT_EQ(back.intrinsics.width_px, camera.intrinsics.width_px);
  EXPECT_EQ(back.intrinsics.height_px, camera.intrinsics.height_px);
  EXPECT_EQ(back.intrinsics.fx_px, camera.intrinsics.fx_px);
  EXPECT_EQ(back.intrinsics.fy_px, camera.intrinsics.fy_px);
  EXPECT_NEAR(back.intrinsics.cx_px, camera.intrinsics.cx_px, 1e-12);
  EXPECT_NEAR(back.intrinsics.cy_px, camera.intrinsics.cy_px, 1e-12);
  EXPECT_EQ(back.intrinsics.distortion, camera.intrinsics.distortion);
  ASSERT_TRUE(back.camera_from_world && back.sensor_window);
  EXPECT_LT((back.camera_from_world->rotation - pose.rotation).cwiseAbs().maxCoeff(), 1e-15);
  EXPECT_EQ(back.camera_from_world->translation_m, pose.translation_m);
  EXPECT_EQ(back.sensor_window->offset_px, camera.sensor_window->offset_px);
  EXPECT_EQ(back.sensor_window->full_size_px, camera.sensor_window->full_size_px);
  // The file carries the full-frame principal point.
  std::ifstream in(path);
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_TRUE(Contains(text, "cy: 411.9\n")) << text;
}

TEST_F(CameraFileTest, WrongTypeNamesFileLineAndKey) {
  EXPECT_EQ(ErrorReading("image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: abc\ncy: 384\n"
                         "distortion: [0, 0, 0, 0, 0]\n"),
            "camera.yaml:4: key 'cx': expected a number in pixels, got 'abc'");
}

TEST_F(CameraFileTest, MissingKeyIsNamed) {
  EXPECT_EQ(ErrorReading("image_size: [1024, 768]\nfx: 1400\ncx: 512\ncy: 384\n"
                         "distortion: [0, 0, 0, 0, 0]\n"),
            "camera.yaml:1: key 'fy' is missing; expected a positive number in pixels");
}

TEST_F(CameraFileTest, UnknownKeyIsNamed) {
  const std::string message = ErrorReading(
      "image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
      "distortion: [0, 0, 0, 0, 0]\nskew: 0\n");
  EXPECT_EQ(message.rfind("camera.yaml:7: unknown key 'skew'; allowed: ", 0), 0u) << message;
}

TEST_F(CameraFileTest, BadRotationIsRefused) {
  const std::string scaled = ErrorReading(
      "image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
      "distortion: [0, 0, 0, 0, 0]\n"
      "world_to_camera:\n  rotation: [[1,0,0],[0,1.01,0],[0,0,1]]\n  translation_m: [0,0,3]\n");
  EXPECT_EQ(scaled.rfind("camera.yaml:8: key 'world_to_camera.rotation': expected a rotation", 0),
            0u)
      << scaled;
  EXPECT_TRUE(Contains(scaled, "orthonormal with determinant +1")) << scaled;
  const std::string mirrored = ErrorReading(
      "image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
      "distortion: [0, 0, 0, 0, 0]\n"
      "world_to_camera:\n  rotation: [[1,0,0],[0,1,0],[0,0,-1]]\n  translation_m: [0,0,3]\n");
  EXPECT_TRUE(Contains(mirrored, "key 'world_to_camera.rotation'")) << mirrored;
}

TEST_F(CameraFileTest, RoundedRotationIsMadeOrthonormal) {
  // A rotation about z by 30 degrees, written with 7 digits.
  const Camera camera = ReadCameraYaml(
      Write("image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
            "distortion: [0, 0, 0, 0, 0]\n"
            "world_to_camera:\n  rotation: [[0.8660254, -0.5, 0], [0.5, 0.8660254, 0], [0, 0, 1]]\n"
            "  translation_m: [0, 0, 3]\n"));
  const Eigen::Matrix3d& r = camera.camera_from_world->rotation;
  EXPECT_LT((r.transpose() * r - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff(), 1e-15);
  EXPECT_NEAR(r.determinant(), 1.0, 1e-15);
  EXPECT_TRUE(r.isApprox(Eigen::AngleAxisd(std::numbers::pi / 6, Eigen::Vector3d::UnitZ())
                             .toRotationMatrix(),
                         1e-7));
}

TEST_F(CameraFileTest, DistortionNeedsFourOrFiveTerms) {
  EXPECT_EQ(ErrorReading("image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
                         "distortion: [0, 0, 0]\n"),
            "camera.yaml:6: key 'distortion': expected a list of 5 numbers k1 k2 p1 p2 k3 (or 4, "
            "k3 = 0), got '[0, 0, 0]'");
}

TEST_F(CameraFileTest, WindowMustLieInsideTheFullFrame) {
  const std::string message = ErrorReading(
      "image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
      "distortion: [0, 0, 0, 0, 0]\n"
      "sensor_window:\n  offset_px: [0, 100]\n  size_px: [1024, 700]\n");
  EXPECT_EQ(message,
            "camera.yaml:9: key 'sensor_window.size_px': expected a window inside the full frame "
            "image_size [1024, 768] (offset [0, 100] + size [1024, 700] reaches [1024, 800]), got "
            "'[1024, 700]'");
  EXPECT_NE(ErrorReading("image_size: [1024, 768]\nfx: 1400\nfy: 1400\ncx: 512\ncy: 384\n"
                         "distortion: [0, 0, 0, 0, 0]\n"
                         "sensor_window: {offset_px: [-2, 0], size_px: [64, 64]}\n")
                .find("offset_px"),
            std::string::npos);
}

TEST_F(CameraFileTest, ImageSizeMustBeWholePixels) {
  EXPECT_TRUE(Contains(ErrorReading("image_size: [1024.5, 768]\nfx: 1400\n"),
                       "camera.yaml:1: key 'image_size': expected [width, height]"));
}

TEST_F(CameraFileTest, MissingFileNamesThePath) {
  const fs::path path = folder_ / "nowhere.yaml";
  EXPECT_EQ(InputErrorOf([&] { ReadCameraYaml(path); }), path.string() + ": file not found");
}

}  // namespace
}  // namespace tumbletrace
