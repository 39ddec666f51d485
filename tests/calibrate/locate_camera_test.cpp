// The camera's pose from a target in the throw region and from surveyed points.
#include "tumbletrace/calibrate/locate_camera.hpp"

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <fstream>
#include <random>

#include "support/board_views.hpp"
#include "support/temp_dir.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

constexpr double kDeg = 180.0 / M_PI;

// A camera 3 m from the throw plane looking at it squarely, rows level (world z up).
RigidTransform TrueCameraFromWorld() {
  RigidTransform pose;
  pose.rotation << 1, 0, 0, 0, 0, -1, 0, 1, 0;
  pose.rotation = Eigen::AngleAxisd(0.05, Eigen::Vector3d::UnitY()) * pose.rotation;
  pose.translation_m = Eigen::Vector3d(0.1, 0.2, 3.0);
  return pose;
}

// Small rotation angle between two rotations, deg.
double AngleDeg(const Eigen::Matrix3d& a, const Eigen::Matrix3d& b) {
  return Eigen::AngleAxisd(a * b.transpose()).angle() * kDeg;
}

TEST(LocateCamera, WorldFromTargetIsZUpWithTheTargetsXMadeLevel) {
  // A board hanging upright: its y axis points down.
  const RigidTransform w = WorldFromTarget(Eigen::Vector3d(0, 1, 0));
  EXPECT_TRUE((w.rotation * Eigen::Vector3d(0, 1, 0)).isApprox(Eigen::Vector3d(0, 0, -1)));
  EXPECT_TRUE((w.rotation * Eigen::Vector3d(1, 0, 0)).isApprox(Eigen::Vector3d(1, 0, 0)));
  EXPECT_NEAR(w.rotation.determinant(), 1.0, 1e-12);
  // A board lying flat, face up (z into the board: down).
  const RigidTransform flat = WorldFromTarget(Eigen::Vector3d(0, 0, 1));
  EXPECT_TRUE((flat.rotation * Eigen::Vector3d(0, 0, -1)).isApprox(Eigen::Vector3d(0, 0, 1)));
  // The target's x along gravity: its y is made level instead.
  const RigidTransform x_down = WorldFromTarget(Eigen::Vector3d(-1, 0, 0));
  EXPECT_TRUE((x_down.rotation * Eigen::Vector3d(1, 0, 0)).isApprox(Eigen::Vector3d(0, 0, 1)));
  EXPECT_NEAR(x_down.rotation.determinant(), 1.0, 1e-12);
  EXPECT_THROW(WorldFromTarget(Eigen::Vector3d::Zero()), InputError);
}

TEST(LocateCamera, ParsesDirections) {
  EXPECT_EQ(ParseDirection("-y", "--down"), Eigen::Vector3d(0, -1, 0));
  EXPECT_EQ(ParseDirection("+z", "--down"), Eigen::Vector3d(0, 0, 1));
  EXPECT_TRUE(ParseDirection("0,3,-4", "--down").isApprox(Eigen::Vector3d(0, 0.6, -0.8)));
  EXPECT_THROW(ParseDirection("down", "--down"), InputError);
  EXPECT_THROW(ParseDirection("0,0,0", "--down"), InputError);
  EXPECT_THROW(ParseDirection("1,2", "--down"), InputError);
}

// Surveyed points with 0.2 px noise: the pose within its reported uncertainty, and that
// uncertainty checked against the scatter over 50 seeded realisations.
TEST(LocateCamera, RecoversThePoseWithAnHonestUncertainty) {
  const CameraIntrinsics k = testing::CalibrationTruth();
  const RigidTransform truth = TrueCameraFromWorld();
  std::vector<Eigen::Vector3d> world;
  for (double x : {-0.8, -0.3, 0.2, 0.7}) {
    for (double z : {-0.5, 0.0, 0.5}) world.emplace_back(x, 0.15 * (x > 0 ? 1 : -1) * z, z);
  }
  std::vector<Eigen::Matrix<double, 6, 1>> errors;
  Eigen::Vector3d sigma_rotation_deg;
  double sum_vertical2 = 0.0, sum_sigma_vertical2 = 0.0;
  for (int seed = 0; seed < 50; ++seed) {
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> noise(0.0, 0.2);
    std::vector<PointCorrespondence> points;
    for (const Eigen::Vector3d& x : world) {
      Eigen::Vector2d pixel;
      ASSERT_TRUE(ProjectBoardPoint(x, k, truth, &pixel));
      points.push_back({x, pixel + Eigen::Vector2d(noise(rng), noise(rng))});
    }
    const CameraPose pose = LocateCamera(points, k);
    const Eigen::AngleAxisd d(pose.camera_from_world.rotation * truth.rotation.transpose());
    Eigen::Matrix<double, 6, 1> e;
    e << d.angle() * d.axis(), pose.camera_from_world.translation_m - truth.translation_m;
    errors.push_back(e);
    const double vertical = std::acos(std::clamp(
        pose.camera_from_world.rotation.col(2).dot(truth.rotation.col(2)), -1.0, 1.0));
    sum_vertical2 += std::pow(vertical * kDeg, 2);
    sum_sigma_vertical2 += std::pow(pose.sigma_vertical_deg, 2);
    if (seed == 0) {
      sigma_rotation_deg = pose.sigma_rotation_deg;
      EXPECT_NEAR(pose.rms_px, 0.2, 0.08);
      for (int i = 0; i < 3; ++i) {
        EXPECT_LT(std::abs(e[i]) * kDeg, 4 * pose.sigma_rotation_deg[i]);
        EXPECT_LT(std::abs(e[3 + i]) * 1e3, 4 * pose.sigma_translation_mm[i]);
      }
    }
  }
  // The empirical scatter of the rotation about each axis against the reported 1-sigma
  // (which varies little between realisations): within a factor 1.5.
  for (int i = 0; i < 3; ++i) {
    double sum = 0.0;
    for (const auto& e : errors) sum += e[i] * e[i];
    const double scatter_deg = std::sqrt(sum / errors.size()) * kDeg;
    EXPECT_GT(scatter_deg / sigma_rotation_deg[i], 1 / 1.5) << "axis " << i;
    EXPECT_LT(scatter_deg / sigma_rotation_deg[i], 1.5) << "axis " << i;
  }
  // The world's vertical as the camera sees it: rms angle against the rms reported 1-sigma.
  const double vertical_ratio = std::sqrt(sum_vertical2 / sum_sigma_vertical2);
  std::cout << "vertical: rms error / rms 1-sigma " << vertical_ratio << " (1-sigma "
            << std::sqrt(sum_sigma_vertical2 / errors.size()) << " deg)\n";
  EXPECT_GT(vertical_ratio, 1 / 1.5);
  EXPECT_LT(vertical_ratio, 1.5);
}

// The target placed in the throw region, rendered, found and used to define the world.
TEST(LocateCamera, FromARenderedCharucoBoardInTheThrowRegion) {
  const CameraIntrinsics k = testing::CalibrationTruth();
  const CalibrationTarget target = testing::Charuco(10, 7, 0.08, 0.06);
  // The board hangs upright in the throw plane (its y axis down), the world's origin at
  // the target frame's (the outer corner of its first square).
  const Eigen::Vector3d down_in_target(0, 1, 0);
  const RigidTransform world_from_target = WorldFromTarget(down_in_target);
  RigidTransform camera_from_world;
  camera_from_world.rotation << 1, 0, 0, 0, 0, -1, 0, 1, 0;
  camera_from_world.rotation = Eigen::AngleAxisd(0.2, Eigen::Vector3d::UnitY()) *
                               Eigen::AngleAxisd(-0.1, Eigen::Vector3d::UnitX()) *
                               camera_from_world.rotation;
  camera_from_world.translation_m = Eigen::Vector3d(-0.35, -0.25, 2.2);
  RigidTransform camera_from_target;
  camera_from_target.rotation = camera_from_world.rotation * world_from_target.rotation;
  camera_from_target.translation_m = camera_from_world.Apply(world_from_target.translation_m);
  ASSERT_TRUE(testing::SheetInImage(target, k, camera_from_target, 5.0));
  const cv::Mat image =
      RenderBoardImage(target.BlackPolygons(), k, camera_from_target, BoardImageSettings{});
  const std::optional<TargetView> view = DetectTarget(image, target, "board");
  ASSERT_TRUE(view.has_value());
  const CameraPose pose =
      LocateCamera(TargetCorrespondences(*view, target, world_from_target), k);
  const double angle = AngleDeg(pose.camera_from_world.rotation, camera_from_world.rotation);
  const double shift_mm = 1e3 * (pose.camera_from_world.translation_m - camera_from_world.translation_m).norm();
  std::cout << fmt::format("pose from a rendered ChArUco board: rotation off by {:.4f} deg "
                           "(1-sigma {:.4f} {:.4f} {:.4f} deg), translation by {:.2f} mm, rms "
                           "{:.3f} px over {} corners\n",
                           angle, pose.sigma_rotation_deg.x(), pose.sigma_rotation_deg.y(),
                           pose.sigma_rotation_deg.z(), shift_mm, pose.rms_px, pose.points);
  EXPECT_LT(angle, 0.05);
  EXPECT_LT(shift_mm, 3.0);
  // The world's z is up: gravity (world -z) seen from the camera is the target's down.
  const Eigen::Vector3d down_camera = pose.camera_from_world.rotation * Eigen::Vector3d(0, 0, -1);
  EXPECT_LT(std::acos(down_camera.dot(camera_from_target.rotation * down_in_target)) * kDeg, 0.05);
}

TEST(LocateCamera, TooFewOrCollinearPointsAreRefused) {
  const CameraIntrinsics k = testing::CalibrationTruth();
  std::vector<PointCorrespondence> three = {{{0, 0, 3}, {500, 300}}, {{0.1, 0, 3}, {550, 300}},
                                            {{0, 0.1, 3}, {500, 350}}};
  EXPECT_THROW(LocateCamera(three, k), DataError);
  std::vector<PointCorrespondence> line;
  for (int i = 0; i < 6; ++i) line.push_back({{0.1 * i, 0, 3}, {500.0 + 47 * i, 300}});
  EXPECT_THROW(LocateCamera(line, k), DataError);
}

TEST(LocateCamera, ReadsSurveyPointsStrictly) {
  testing::TempDir dir("survey_points");
  const auto write = [&](const std::string& text) {
    std::ofstream(dir.path() / "points.yaml") << text;
    return dir.path() / "points.yaml";
  };
  const auto points = ReadSurveyPoints(write(
      "units: mm\npoints:\n  - {world: [0, 0, 1000], pixel: [512, 384]}\n"
      "  - {world: [500, 0, 0], pixel: [700.5, 500]}\n"));
  ASSERT_EQ(points.size(), 2u);
  EXPECT_EQ(points[0].world_m, Eigen::Vector3d(0, 0, 1));
  EXPECT_EQ(points[1].pixel, Eigen::Vector2d(700.5, 500));
  try {
    ReadSurveyPoints(write("points:\n  - {world: [0, 0, 1], pixel: [1, 2], name: a}\n"));
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("'name'"), std::string::npos) << e.what();
  }
}

}  // namespace
}  // namespace tumbletrace
