// Rays against spheres, capped cylinders, boxes and discs; image bounds on the normalised
// plane. Expected values are worked out by hand from the shapes' definitions.
#include "tumbletrace/sim/ray_geometry.hpp"

#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <cmath>
#include <random>

namespace tumbletrace {
namespace {

RayPrimitive Sphere(const Eigen::Vector3d& c, double r) {
  RayPrimitive s;
  s.shape = RayShape::kSphere;
  s.center_camera_m = c;
  s.half_size_m = {r, r, 0};
  return s;
}

RayPrimitive Box(const Eigen::Vector3d& c, const Eigen::Vector3d& half) {
  RayPrimitive b;
  b.shape = RayShape::kBox;
  b.center_camera_m = c;
  b.half_size_m = half;
  return b;
}

// A cylinder about the camera's x axis.
RayPrimitive CylinderAlongX(const Eigen::Vector3d& c, double r, double half_length) {
  RayPrimitive cyl;
  cyl.shape = RayShape::kCylinder;
  cyl.center_camera_m = c;
  cyl.axes_camera << 0, 0, 1, 0, 1, 0, -1, 0, 0;  // columns: -z, y, x (right-handed)
  cyl.half_size_m = {r, r, half_length};
  return cyl;
}

RayPrimitive DiscFacingCamera(const Eigen::Vector3d& c, double r) {
  RayPrimitive d;
  d.shape = RayShape::kDisc;
  d.center_camera_m = c;
  d.axes_camera << 1, 0, 0, 0, -1, 0, 0, 0, -1;  // normal -z: towards the camera
  d.half_size_m = {r, r, 0};
  return d;
}

Ray From(const Eigen::Vector3d& o, const Eigen::Vector3d& d) { return Ray{o, d.normalized()}; }

TEST(IntersectRay, SphereFromOutsideAndInside) {
  const RayPrimitive s = Sphere({0, 0, 5}, 1);
  RayHit hit;
  ASSERT_TRUE(IntersectRay(s, From({0, 0, 0}, {0, 0, 1}), 0.0, false, &hit));
  EXPECT_NEAR(hit.t_m, 4.0, 1e-12);
  EXPECT_NEAR((hit.normal_camera - Eigen::Vector3d(0, 0, -1)).norm(), 0.0, 1e-12);
  RayHit inside;
  ASSERT_TRUE(IntersectRay(s, From({0, 0, 5}, {1, 0, 0}), 0.0, false, &inside));
  EXPECT_NEAR(inside.t_m, 1.0, 1e-12);
  EXPECT_NEAR((inside.normal_camera - Eigen::Vector3d(1, 0, 0)).norm(), 0.0, 1e-12);
}

TEST(IntersectRay, GrazingRaysTouchOrMiss) {
  const RayPrimitive s = Sphere({0, 0, 5}, 1);
  RayHit touch;
  // Tangent at (1, 0, 5): the discriminant is zero.
  EXPECT_TRUE(IntersectRay(s, From({1, 0, 0}, {0, 0, 1}), 0.0, false, &touch));
  EXPECT_NEAR(touch.t_m, 5.0, 1e-6);
  RayHit miss;
  EXPECT_FALSE(IntersectRay(s, From({1.0 + 1e-9, 0, 0}, {0, 0, 1}), 0.0, false, &miss));
  // Along a box's face: the slab of that face is met edge-on, inside it.
  const RayPrimitive b = Box({0, 0, 5}, {1, 1, 1});
  RayHit along;
  EXPECT_TRUE(IntersectRay(b, From({1, 0, 0}, {0, 0, 1}), 0.0, false, &along));
  EXPECT_NEAR(along.t_m, 4.0, 1e-12);
  EXPECT_FALSE(IntersectRay(b, From({1.0 + 1e-9, 0, 0}, {0, 0, 1}), 0.0, false, &miss));
}

TEST(IntersectRay, NearerHitsAndTheStartAreRespected) {
  const RayPrimitive s = Sphere({0, 0, 5}, 1);
  RayHit hit;
  hit.t_m = 3.0;  // something nearer was met already
  EXPECT_FALSE(IntersectRay(s, From({0, 0, 0}, {0, 0, 1}), 0.0, false, &hit));
  RayHit behind;
  EXPECT_FALSE(IntersectRay(s, From({0, 0, 7}, {0, 0, 1}), 0.0, false, &behind));
  RayHit past_start;  // starting past the near side: the far side
  ASSERT_TRUE(IntersectRay(s, From({0, 0, 0}, {0, 0, 1}), 4.5, false, &past_start));
  EXPECT_NEAR(past_start.t_m, 6.0, 1e-12);
}

TEST(IntersectRay, BoxFacesFromOutsideAndInside) {
  const RayPrimitive b = Box({0.5, 0, 4}, {0.5, 0.25, 1});
  RayHit front;
  ASSERT_TRUE(IntersectRay(b, From({0.5, 0, 0}, {0, 0, 1}), 0.0, false, &front));
  EXPECT_NEAR(front.t_m, 3.0, 1e-12);
  EXPECT_NEAR((front.normal_camera - Eigen::Vector3d(0, 0, -1)).norm(), 0.0, 1e-12);
  RayHit side;  // entering through the face x = 0 from the left
  ASSERT_TRUE(IntersectRay(b, From({-1, 0, 4}, {1, 0, 0}), 0.0, false, &side));
  EXPECT_NEAR(side.t_m, 1.0, 1e-12);
  EXPECT_NEAR((side.normal_camera - Eigen::Vector3d(-1, 0, 0)).norm(), 0.0, 1e-12);
  RayHit inside;
  ASSERT_TRUE(IntersectRay(b, From({0.5, 0, 4}, {0, 1, 0}), 0.0, false, &inside));
  EXPECT_NEAR(inside.t_m, 0.25, 1e-12);
  EXPECT_NEAR((inside.normal_camera - Eigen::Vector3d(0, 1, 0)).norm(), 0.0, 1e-12);
  // A turned box: 45 degrees about the camera's y axis; its corner faces the camera.
  RayPrimitive turned = Box({0, 0, 4}, {0.5, 0.5, 0.5});
  turned.axes_camera = Eigen::AngleAxisd(M_PI / 4, Eigen::Vector3d::UnitY()).toRotationMatrix();
  RayHit edge;
  ASSERT_TRUE(IntersectRay(turned, From({0, 0, 0}, {0, 0, 1}), 0.0, false, &edge));
  EXPECT_NEAR(edge.t_m, 4.0 - 0.5 * std::sqrt(2.0), 1e-12);
}

TEST(IntersectRay, CylinderSideAndCaps) {
  const RayPrimitive cyl = CylinderAlongX({0, 0, 4}, 0.1, 0.5);
  RayHit side;
  ASSERT_TRUE(IntersectRay(cyl, From({0.2, 0, 0}, {0, 0, 1}), 0.0, false, &side));
  EXPECT_NEAR(side.t_m, 3.9, 1e-12);
  EXPECT_NEAR((side.normal_camera - Eigen::Vector3d(0, 0, -1)).norm(), 0.0, 1e-12);
  RayHit off_axis;  // half way up the radius: t = 4 - sqrt(r^2 - 0.05^2)
  ASSERT_TRUE(IntersectRay(cyl, From({0, 0.05, 0}, {0, 0, 1}), 0.0, false, &off_axis));
  EXPECT_NEAR(off_axis.t_m, 4.0 - std::sqrt(0.01 - 0.0025), 1e-12);
  RayHit cap;  // end-on along the axis from the right
  ASSERT_TRUE(IntersectRay(cyl, From({2, 0.05, 4}, {-1, 0, 0}), 0.0, false, &cap));
  EXPECT_NEAR(cap.t_m, 1.5, 1e-12);
  EXPECT_NEAR((cap.normal_camera - Eigen::Vector3d(1, 0, 0)).norm(), 0.0, 1e-12);
  RayHit beyond;  // past the end: neither side nor cap
  EXPECT_FALSE(IntersectRay(cyl, From({0.6, 0, 0}, {0, 0, 1}), 0.0, false, &beyond));
  RayHit slanted;  // through the cap's rim region: enters by the side, or by the cap
  const Ray ray = From({0.55, 0, 3}, {-0.2, 0, 1});
  ASSERT_TRUE(IntersectRay(cyl, ray, 0.0, false, &slanted));
  const Eigen::Vector3d p = ray.origin_camera_m + slanted.t_m * ray.direction_camera;
  EXPECT_LE(std::abs(p.x()), 0.5 + 1e-12);
  EXPECT_LE(std::hypot(p.y(), p.z() - 4), 0.1 + 1e-12);
  EXPECT_TRUE(std::abs(std::abs(p.x()) - 0.5) < 1e-12 || std::abs(std::hypot(p.y(), p.z() - 4) - 0.1) < 1e-12);
}

TEST(IntersectRay, DiscsAreOneSidedForCameraRaysOnly) {
  const RayPrimitive d = DiscFacingCamera({0, 0, 2}, 0.01);
  RayHit front;
  ASSERT_TRUE(IntersectRay(d, From({0, 0, 0}, {0.004, 0, 2}), 0.0, false, &front));
  EXPECT_NEAR(front.t_m, std::hypot(0.004, 2.0), 1e-12);
  RayHit outside;
  EXPECT_FALSE(IntersectRay(d, From({0, 0, 0}, {0.011, 0, 2}), 0.0, false, &outside));
  RayHit back;
  EXPECT_FALSE(IntersectRay(d, From({0, 0, 3}, {0, 0, -1}), 0.0, false, &back));
  ASSERT_TRUE(IntersectRay(d, From({0, 0, 3}, {0, 0, -1}), 0.0, true, &back));
  EXPECT_NEAR((back.normal_camera - Eigen::Vector3d(0, 0, 1)).norm(), 0.0, 1e-12);
}

TEST(ImageBounds, SphereBoundsAreTheTangentPlanes) {
  const RayPrimitive s = Sphere({0.3, -0.2, 1.5}, 0.1);
  const NormalisedBox box = ImageBounds(s);
  ASSERT_FALSE(box.unbounded);
  // Points of the sphere project inside, and the extremes come within 1e-6 of the bounds.
  std::mt19937_64 rng(5);
  std::normal_distribution<double> g;
  double x_lo = 1e9, x_hi = -1e9, y_lo = 1e9, y_hi = -1e9;
  for (int i = 0; i < 200000; ++i) {
    const Eigen::Vector3d p = s.center_camera_m + 0.1 * Eigen::Vector3d(g(rng), g(rng), g(rng)).normalized();
    x_lo = std::min(x_lo, p.x() / p.z());
    x_hi = std::max(x_hi, p.x() / p.z());
    y_lo = std::min(y_lo, p.y() / p.z());
    y_hi = std::max(y_hi, p.y() / p.z());
  }
  EXPECT_GE(x_lo, box.x_min - 1e-12);
  EXPECT_LE(x_hi, box.x_max + 1e-12);
  EXPECT_GE(y_lo, box.y_min - 1e-12);
  EXPECT_LE(y_hi, box.y_max + 1e-12);
  EXPECT_NEAR(x_lo, box.x_min, 1e-4);
  EXPECT_NEAR(x_hi, box.x_max, 1e-4);
  EXPECT_NEAR(y_lo, box.y_min, 1e-4);
  EXPECT_NEAR(y_hi, box.y_max, 1e-4);
}

TEST(ImageBounds, BoxCornersBoundItsImageAndStraddlingSolidsAreUnbounded) {
  RayPrimitive b = Box({0.1, 0.05, 2}, {0.2, 0.1, 0.05});
  b.axes_camera = Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 2, 3).normalized()).toRotationMatrix();
  const NormalisedBox box = ImageBounds(b);
  ASSERT_FALSE(box.unbounded);
  std::mt19937_64 rng(9);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  for (int i = 0; i < 1000; ++i) {
    const Eigen::Vector3d p =
        b.center_camera_m + b.axes_camera * Eigen::Vector3d(u(rng), u(rng), u(rng)).cwiseProduct(b.half_size_m);
    EXPECT_TRUE(box.Contains(p.x() / p.z(), p.y() / p.z()));
  }
  EXPECT_TRUE(ImageBounds(Sphere({0, 0, 0.05}, 0.1)).unbounded);
  EXPECT_TRUE(ImageBounds(CylinderAlongX({0, 0, 0.0}, 0.1, 1.0)).unbounded);
  EXPECT_TRUE(ImageBounds(Sphere({0, 0, -5}, 0.1)).unbounded);
}

TEST(BoundingRadius, HoldsEachShape) {
  EXPECT_DOUBLE_EQ(BoundingRadius(Sphere({0, 0, 1}, 0.3)), 0.3);
  EXPECT_DOUBLE_EQ(BoundingRadius(CylinderAlongX({0, 0, 1}, 0.3, 0.4)), 0.5);
  EXPECT_DOUBLE_EQ(BoundingRadius(Box({0, 0, 1}, {0.1, 0.2, 0.2})), 0.3);
}

}  // namespace
}  // namespace tumbletrace
