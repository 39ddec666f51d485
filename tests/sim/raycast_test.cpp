// Ray-cast frames against outside references: the outline of a sphere is the conic of its
// dual quadric (Hartley & Zisserman), brightness follows Lambert's cosine law, and the rules
// of the renderer itself (hidden markers, shadows at the ambient level, the marker kinds).
#include "tumbletrace/sim/raycast.hpp"

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <cstdint>
#include <iostream>
#include <opencv2/imgproc.hpp>
#include <vector>

namespace tumbletrace {
namespace {

// A pinhole camera without distortion.
CameraIntrinsics Pinhole(int width, int height, double f) {
  CameraIntrinsics k;
  k.width_px = width;
  k.height_px = height;
  k.fx_px = k.fy_px = f;
  k.cx_px = 0.5 * (width - 1);
  k.cy_px = 0.5 * (height - 1);
  return k;
}

RaycastSettings Quiet(const CameraIntrinsics& k) {
  RaycastSettings settings;
  settings.width_px = k.width_px;
  settings.height_px = k.height_px;
  settings.background_level = 0.0;
  settings.background_gradient = 0.0;
  settings.noise_sigma_levels = 0.0;
  settings.body_level = 60.0;
  settings.dot_level = 240.0;
  settings.supersampling = 4;
  settings.lighting.ambient = 0.25;
  settings.lighting.diffuse = 0.75;
  settings.lighting.specular = 0.4;
  settings.lighting.shininess = 40;
  return settings;
}

SceneSolid Ball(const Eigen::Vector3d& c, double r, SurfaceKind surface, int marker) {
  SceneSolid solid;
  solid.primitive.shape = RayShape::kSphere;
  solid.primitive.center_camera_m = c;
  solid.primitive.half_size_m = {r, r, 0};
  solid.surface = surface;
  solid.marker = marker;
  return solid;
}

SceneSolid Block(const Eigen::Vector3d& c, const Eigen::Vector3d& half) {
  SceneSolid solid;
  solid.primitive.shape = RayShape::kBox;
  solid.primitive.center_camera_m = c;
  solid.primitive.half_size_m = half;
  solid.surface = SurfaceKind::kBody;
  return solid;
}

RayScene SceneOf(std::vector<SceneSolid> solids, const Eigen::Vector3d& towards_light) {
  RayScene scene;
  scene.solids = std::move(solids);
  scene.towards_light_camera = towards_light.normalized();
  return scene;
}

Eigen::Vector2d ProjectCentre(const CameraIntrinsics& k, const Eigen::Vector3d& c) {
  Eigen::Vector2d px;
  ProjectCameraPoint(k, c.data(), px.data());
  return px;
}

struct Centroid {
  double sum = 0.0;
  Eigen::Vector2d at_px = Eigen::Vector2d::Zero();
};

// Intensity-weighted centroid of the levels above `reference` in a square window.
Centroid CentroidAbove(const cv::Mat& frame, double reference, const Eigen::Vector2d& around, int half) {
  Centroid c;
  Eigen::Vector2d moment = Eigen::Vector2d::Zero();
  for (int y = std::max(0, int(around.y()) - half); y <= std::min(frame.rows - 1, int(around.y()) + half); ++y) {
    for (int x = std::max(0, int(around.x()) - half); x <= std::min(frame.cols - 1, int(around.x()) + half); ++x) {
      const double w = std::max(0.0, frame.at<std::uint8_t>(y, x) - reference);
      c.sum += w;
      moment += w * Eigen::Vector2d(x, y);
    }
  }
  c.at_px = moment / c.sum;
  return c;
}

// The image of a sphere (centre c, radius r, camera frame) through P = K [I | 0] is the
// conic C = (C*)^-1 with C* = P Q* P^T, Q* the dual quadric, Q* ~ Q^-1 for the point
// quadric Q = [I, -c; -c^T, c^T c - r^2] (Hartley & Zisserman, Multiple View Geometry, 2nd
// ed., result 8.9 and eq. 3.16). Returned as centre, semi-axes (major first) and the major
// axis's angle in image coordinates.
struct Ellipse {
  Eigen::Vector2d centre;
  double major = 0.0;
  double minor = 0.0;
  double angle_rad = 0.0;
};

Ellipse SphereConic(const CameraIntrinsics& k, const Eigen::Vector3d& c, double r) {
  Eigen::Matrix4d q = Eigen::Matrix4d::Identity();
  q.block<3, 1>(0, 3) = -c;
  q.block<1, 3>(3, 0) = -c.transpose();
  q(3, 3) = c.squaredNorm() - r * r;
  Eigen::Matrix<double, 3, 4> p = Eigen::Matrix<double, 3, 4>::Zero();
  Eigen::Matrix3d kk;
  kk << k.fx_px, 0, k.cx_px, 0, k.fy_px, k.cy_px, 0, 0, 1;
  p.leftCols<3>() = kk;
  const Eigen::Matrix3d dual = p * q.inverse() * p.transpose();
  const Eigen::Matrix3d conic = dual.inverse();
  const Eigen::Matrix2d a = conic.topLeftCorner<2, 2>();
  const Eigen::Vector2d b = conic.topRightCorner<2, 1>();
  Ellipse e;
  e.centre = -a.inverse() * b;
  const double scale = e.centre.dot(a * e.centre) - conic(2, 2);
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eig(a / scale);
  e.major = 1.0 / std::sqrt(eig.eigenvalues()(0));  // smaller eigenvalue: the longer axis
  e.minor = 1.0 / std::sqrt(eig.eigenvalues()(1));
  e.angle_rad = std::atan2(eig.eigenvectors()(1, 0), eig.eigenvectors()(0, 0));
  return e;
}

// Sub-pixel outline points of a bright uniform disc on black (levels / full in 0..1): along
// rows where the outline is steeper than 45 degrees, across columns elsewhere. At a crossing
// from outside (pixel a, the first lit) to inside (pixel b, the first full), the edge lies at
// b + 0.5 - sum of the levels of a..b (exact for a straight edge: the lit length).
std::vector<cv::Point2f> OutlinePoints(const cv::Mat& frame, double full, const Eigen::Vector2d& centre) {
  std::vector<cv::Point2f> points;
  const auto level = [&](int x, int y) { return frame.at<std::uint8_t>(y, x) / full; };
  for (int transpose = 0; transpose < 2; ++transpose) {
    const int lines = transpose ? frame.cols : frame.rows;
    const int length = transpose ? frame.rows : frame.cols;
    for (int line = 0; line < lines; ++line) {
      const auto v = [&](int i) { return transpose ? level(line, i) : level(i, line); };
      for (int direction : {1, -1}) {
        int a = direction > 0 ? 0 : length - 1;
        while (a >= 0 && a < length && v(a) <= 0.0) a += direction;
        if (a < 0 || a >= length) continue;
        int b = a;
        double lit = 0.0;
        while (b >= 0 && b < length && v(b) < 0.999) {
          lit += v(b);
          b += direction;
        }
        if (b < 0 || b >= length || std::abs(b - a) > 3) continue;
        lit += v(b);
        const double edge = b + direction * (0.5 - lit);
        const Eigen::Vector2d p = transpose ? Eigen::Vector2d(line, edge) : Eigen::Vector2d(edge, line);
        const Eigen::Vector2d d = p - centre;
        const bool steep = std::abs(d.x()) >= std::abs(d.y());  // normal nearer the x axis
        if (steep != static_cast<bool>(transpose)) points.emplace_back(p.x(), p.y());
      }
    }
  }
  return points;
}

TEST(RaycastFrame, SphereOutlineIsTheConicOfItsDualQuadric) {
  // Hartley & Zisserman, Multiple View Geometry, 2nd ed.: the outline of a sphere is the
  // conic C = (P Q* P^T)^-1. A sphere well off the axis, so that its image is an ellipse.
  const CameraIntrinsics k = Pinhole(640, 480, 600.0);
  const Eigen::Vector3d c(0.35, 0.2, 1.0);
  const double r = 0.05;
  RaycastSettings settings = Quiet(k);
  settings.supersampling = 16;
  settings.dot_level = 250.0;
  settings.lighting.ambient = 1.0;  // uniform: the outline alone
  settings.lighting.diffuse = 0.0;
  settings.lighting.specular = 0.0;
  const RayScene scene = SceneOf({Ball(c, r, SurfaceKind::kMatteMarker, 0)}, {0, 0, -1});
  const cv::Mat frame = RaycastFrame({scene}, k, settings);
  const Ellipse truth = SphereConic(k, c, r);
  const std::vector<cv::Point2f> points = OutlinePoints(frame, 250.0, truth.centre);
  ASSERT_GT(points.size(), 150u);
  const cv::RotatedRect fit = cv::fitEllipse(points);
  const double w = 0.5 * fit.size.width, h = 0.5 * fit.size.height;
  const double fit_angle = fit.angle * M_PI / 180 + (w >= h ? 0.0 : 0.5 * M_PI);
  const double centre_error = (Eigen::Vector2d(fit.center.x, fit.center.y) - truth.centre).norm();
  const double major_error = std::max(w, h) - truth.major;
  const double minor_error = std::min(w, h) - truth.minor;
  const double angle_error = std::abs(std::sin(fit_angle - truth.angle_rad));
  std::cout << "outline vs conic: centre " << centre_error << " px, axes " << major_error << ", "
            << minor_error << " px (truth " << truth.major << ", " << truth.minor << "), angle "
            << angle_error * 180 / M_PI << " deg\n";
  EXPECT_LT(centre_error, 0.05);
  EXPECT_LT(std::abs(major_error), 0.05);
  EXPECT_LT(std::abs(minor_error), 0.05);
  EXPECT_GT(truth.major - truth.minor, 1.0);  // an ellipse, whose angle means something
  EXPECT_LT(angle_error, 0.5 * M_PI / 180);
}

TEST(RaycastFrame, LitSphereFollowsLambertsCosineLaw) {
  // Lambert (Photometria, 1760): level = body_level (ambient + diffuse max(0, n . l)), with n
  // the sphere's normal where each pixel centre's ray meets it.
  const CameraIntrinsics k = Pinhole(320, 240, 600.0);
  const Eigen::Vector3d c(0, 0, 1.0);
  const double r = 0.15;  // about 90 px of radius
  RaycastSettings settings = Quiet(k);
  settings.body_level = 200.0;
  const Eigen::Vector3d l = Eigen::Vector3d(1, -0.5, -1).normalized();
  const RayScene scene = SceneOf({Ball(c, r, SurfaceKind::kBody, -1)}, l);
  const cv::Mat frame = RaycastFrame({scene}, k, settings);
  int checked = 0;
  double worst = 0.0;
  for (int y = 0; y < k.height_px; y += 3) {
    for (int x = 0; x < k.width_px; x += 3) {
      const Eigen::Vector3d d = Eigen::Vector3d((x - k.cx_px) / k.fx_px, (y - k.cy_px) / k.fy_px, 1).normalized();
      RayHit hit;
      RayPrimitive sphere = scene.solids[0].primitive;
      if (!IntersectRay(sphere, Ray{Eigen::Vector3d::Zero(), d}, 0.0, false, &hit)) continue;
      const double cos_incidence = hit.normal_camera.dot(l);
      if (-hit.normal_camera.dot(d) < 0.3 || std::abs(cos_incidence) < 0.05) continue;  // rim, terminator
      const double expected = 200.0 * (0.25 + 0.75 * std::max(0.0, cos_incidence));
      worst = std::max(worst, std::abs(frame.at<std::uint8_t>(y, x) - expected));
      ++checked;
    }
  }
  EXPECT_GT(checked, 1500);
  EXPECT_LT(worst, 1.0);
}

TEST(RaycastFrame, MarkerBehindAPartIsHiddenUnlessOcclusionIsOff) {
  const CameraIntrinsics k = Pinhole(200, 160, 800.0);
  const RayScene scene = SceneOf({Block({0, 0, 0.8}, {0.03, 0.03, 0.01}),
                                  Ball({0, 0, 1.0}, 0.01, SurfaceKind::kMatteMarker, 0)},
                                 {0, 0, -1});
  RaycastSettings settings = Quiet(k);
  double max_level = 0.0;
  cv::minMaxLoc(RaycastFrame({scene}, k, settings), nullptr, &max_level);
  EXPECT_LE(max_level, 60.0);  // the block at most: body_level facing the light
  settings.occlusion = false;
  cv::minMaxLoc(RaycastFrame({scene}, k, settings), nullptr, &max_level);
  EXPECT_NEAR(max_level, 60.0, 0.5);  // the ball drawn, in the block's shadow: ambient
  settings.shadows = false;
  cv::minMaxLoc(RaycastFrame({scene}, k, settings), nullptr, &max_level);
  EXPECT_GE(max_level, 239.0);  // the ball, facing the light from the camera
}

TEST(RaycastFrame, ShadowedMarkerShowsTheAmbientLevel) {
  // The light comes from the camera's right (+x); a block to the ball's right, outside its
  // image, stands between the ball and the light.
  const CameraIntrinsics k = Pinhole(200, 160, 800.0);
  const Eigen::Vector3d c(0, 0, 1.0);
  const SceneSolid ball = Ball(c, 0.01, SurfaceKind::kMatteMarker, 0);
  const RayScene shadowed = SceneOf({ball, Block({0.1, 0, 1.0}, {0.02, 0.05, 0.05})}, {1, 0, 0});
  RaycastSettings settings = Quiet(k);
  const cv::Mat frame = RaycastFrame({shadowed}, k, settings);
  const Eigen::Vector2d centre = ProjectCentre(k, c);
  const double radius_px = 8.0;  // 800 * 0.01 / 1.0
  for (int y = 0; y < k.height_px; ++y) {
    for (int x = 0; x < k.width_px; ++x) {
      if ((Eigen::Vector2d(x, y) - centre).norm() > radius_px - 1.5) continue;
      EXPECT_NEAR(frame.at<std::uint8_t>(y, x), 0.25 * 240.0, 0.5) << x << ", " << y;
    }
  }
  // Without shadows the side facing the light is lit.
  settings.shadows = false;
  const cv::Mat lit = RaycastFrame({shadowed}, k, settings);
  EXPECT_GT(lit.at<std::uint8_t>(int(centre.y()), int(centre.x() + 5)), 0.25 * 240.0 + 50);
}

TEST(RaycastFrame, MarkerKindsRenderAsDocumented) {
  // A ball of about 10 px across, lit from the upper left and front (y down in the camera).
  const CameraIntrinsics k = Pinhole(121, 101, 800.0);  // the centre on a pixel's centre
  const Eigen::Vector3d c(0, 0, 0.8);
  const double r = 0.005;
  const Eigen::Vector2d centre = ProjectCentre(k, c);
  const Eigen::Vector3d from_upper_left(-1, -1, -1);
  RaycastSettings settings = Quiet(k);
  const double level = 160.0;  // low enough that the highlight does not saturate
  settings.dot_level = level;
  const auto render = [&](SurfaceKind kind, const Eigen::Vector3d& light) {
    return RaycastFrame({SceneOf({Ball(c, r, kind, 0)}, light)}, k, settings);
  };
  double glossy_max = 0.0, matte_max = 0.0, matte_min = 0.0;
  cv::minMaxLoc(render(SurfaceKind::kGlossyMarker, from_upper_left), nullptr, &glossy_max);
  const cv::Mat matte = render(SurfaceKind::kMatteMarker, from_upper_left);
  cv::minMaxLoc(matte, nullptr, &matte_max);
  EXPECT_GT(glossy_max, matte_max + 15.0);  // the highlight
  EXPECT_LE(matte_max, level);              // Lambert never passes the level
  // The matte ball's centre pixel faces the camera: ambient + diffuse * cos(54.7 degrees).
  EXPECT_NEAR(matte.at<std::uint8_t>(int(centre.y() + 0.5), int(centre.x() + 0.5)),
              level * (0.25 + 0.75 / std::sqrt(3.0)), 3.0);
  cv::minMaxLoc(matte(cv::Rect(int(centre.x()) - 2, int(centre.y()) - 2, 5, 5)), &matte_min, nullptr);
  EXPECT_GT(matte_min, 0.25 * level);
  // Retro-reflective: the same whatever the light, between 0.9 and 1 of the level inside.
  const cv::Mat retro = render(SurfaceKind::kRetroMarker, from_upper_left);
  EXPECT_EQ(cv::norm(retro, render(SurfaceKind::kRetroMarker, {1, 1, 0.2}), cv::NORM_INF), 0.0);
  for (int y = 0; y < k.height_px; ++y) {
    for (int x = 0; x < k.width_px; ++x) {
      if ((Eigen::Vector2d(x, y) - centre).norm() > 8.0 * 0.625 - 1.5) continue;  // 5 px radius
      EXPECT_GE(retro.at<std::uint8_t>(y, x), 0.9 * level - 0.5);
      EXPECT_LE(retro.at<std::uint8_t>(y, x), level + 0.5);
    }
  }
}

TEST(RaycastFrame, SideLitBallsCentroidLeansTowardsTheLight) {
  // A 10 px ball lit from the left: its intensity centroid (the detector's measure) moves
  // left of the projected centre; retro-reflectors stay on it.
  const CameraIntrinsics k = Pinhole(120, 100, 800.0);
  const Eigen::Vector3d c(0, 0, 0.8);
  const Eigen::Vector2d centre = ProjectCentre(k, c);
  RaycastSettings settings = Quiet(k);
  const Eigen::Vector3d from_left(-1, 0, -0.3);
  for (const SurfaceKind kind : {SurfaceKind::kGlossyMarker, SurfaceKind::kMatteMarker, SurfaceKind::kRetroMarker}) {
    const cv::Mat frame = RaycastFrame({SceneOf({Ball(c, 0.005, kind, 0)}, from_left)}, k, settings);
    const Eigen::Vector2d bias = CentroidAbove(frame, 0.0, centre, 9).at_px - centre;
    std::cout << "surface " << static_cast<int>(kind) << ": centroid - centre = " << bias.transpose() << " px\n";
    EXPECT_NEAR(bias.y(), 0.0, 0.02);  // symmetric top to bottom
    if (kind == SurfaceKind::kRetroMarker) {
      EXPECT_NEAR(bias.x(), 0.0, 0.02);
    } else {
      EXPECT_LT(bias.x(), -0.3);
    }
  }
}

TEST(RaycastFrame, NearerMarkerHidesAFartherOne) {
  const CameraIntrinsics k = Pinhole(200, 160, 800.0);
  RaycastSettings settings = Quiet(k);
  // A matte ball in front of a retro one of the same size: only the matte one shows.
  const RayScene scene = SceneOf({Ball({0, 0, 1.0}, 0.01, SurfaceKind::kMatteMarker, 0),
                                  Ball({0, 0, 1.1}, 0.01, SurfaceKind::kRetroMarker, 1)},
                                 {0, 0, -1});
  const cv::Mat frame = RaycastFrame({scene}, k, settings);
  const RayScene alone = SceneOf({scene.solids[0]}, {0, 0, -1});
  EXPECT_EQ(cv::norm(frame, RaycastFrame({alone}, k, settings), cv::NORM_INF), 0.0);
}

TEST(RaycastFrame, AwkwardScenesRender) {
  const CameraIntrinsics k = Pinhole(160, 120, 400.0);
  const RaycastSettings settings = Quiet(k);
  // Nothing at all: the background.
  double lo = 1.0, hi = 1.0;
  cv::minMaxLoc(RaycastFrame({}, k, settings), &lo, &hi);
  EXPECT_EQ(lo, 0.0);
  EXPECT_EQ(hi, 0.0);
  // A ball cut by the image's left border: drawn up to it.
  const Eigen::Vector3d c(-79.5 / 400.0, 0, 1.0);
  const cv::Mat cut = RaycastFrame({SceneOf({Ball(c, 0.02, SurfaceKind::kRetroMarker, 0)}, {0, 0, -1})}, k, settings);
  EXPECT_GT(cut.at<std::uint8_t>(60, 0), 200);
  EXPECT_EQ(cut.at<std::uint8_t>(60, 20), 0);
  // A block reaching behind the camera (its image is unbounded): what is in front is drawn.
  const cv::Mat near = RaycastFrame({SceneOf({Block({0, 0.1, 0.2}, {0.5, 0.05, 0.5})}, {0, 0, -1})}, k, settings);
  EXPECT_GT(near.at<std::uint8_t>(119, 80), 0);
  EXPECT_EQ(near.at<std::uint8_t>(0, 80), 0);
  // The camera inside a big ball: its inside fills the frame.
  const cv::Mat inside = RaycastFrame({SceneOf({Ball({0, 0, 0}, 5.0, SurfaceKind::kBody, -1)}, {0, 0, -1})}, k, settings);
  cv::minMaxLoc(inside, &lo, nullptr);
  EXPECT_GE(lo, 0.25 * 60.0 - 0.5);
}

TEST(RaycastFrame, ExposureAveragesTheInstants) {
  const CameraIntrinsics k = Pinhole(100, 80, 400.0);
  const RaycastSettings settings = Quiet(k);
  const RayScene left = SceneOf({Ball({-0.05, 0, 1}, 0.02, SurfaceKind::kRetroMarker, 0)}, {0, 0, -1});
  const RayScene right = SceneOf({Ball({0.05, 0, 1}, 0.02, SurfaceKind::kRetroMarker, 0)}, {0, 0, -1});
  cv::Mat a, b, both;
  RaycastFrame({left}, k, settings).convertTo(a, CV_32F);
  RaycastFrame({right}, k, settings).convertTo(b, CV_32F);
  RaycastFrame({left, right}, k, settings).convertTo(both, CV_32F);
  EXPECT_LE(cv::norm(both, 0.5 * (a + b), cv::NORM_INF), 1.0);  // rounding of a, b and both
}

TEST(RaycastFrame, RefusesBadSettings) {
  const CameraIntrinsics k = Pinhole(100, 80, 400.0);
  RaycastSettings settings = Quiet(k);
  settings.supersampling = 0;
  EXPECT_THROW(RaycastFrame({}, k, settings), std::invalid_argument);
  settings = Quiet(k);
  settings.width_px = 50;
  EXPECT_THROW(RaycastFrame({}, k, settings), std::invalid_argument);
  RayScene scene;
  scene.towards_light_camera = {0, 0, 2};
  EXPECT_THROW(RaycastFrame({scene}, k, Quiet(k)), std::invalid_argument);
}

}  // namespace
}  // namespace tumbletrace
