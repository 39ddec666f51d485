// Ray and solid intersections, image bounds (include/tumbletrace/sim/ray_geometry.hpp).
#include "tumbletrace/sim/ray_geometry.hpp"

#include <algorithm>
#include <array>
#include <cmath>

namespace tumbletrace {
namespace {

// Keeps t when t_min < t < hit->t_m.
bool Closer(double t, double t_min, const RayHit& hit) { return t > t_min && t < hit.t_m; }

// Sphere |p - c| = r with p = o + t d, |d| = 1 (from memory; the usual quadratic):
//   t = -b -+ sqrt(r^2 - |q|^2),  b = (o - c) . d,  q = (o - c) - b d,
// where q is the offset of the ray's closest approach; writing the discriminant through q
// avoids the cancellation of b^2 - (|o - c|^2 - r^2) for far spheres.
bool IntersectSphere(const RayPrimitive& s, const Ray& ray, double t_min, RayHit* hit) {
  const Eigen::Vector3d oc = ray.origin_camera_m - s.center_camera_m;
  const double b = oc.dot(ray.direction_camera);
  const Eigen::Vector3d q = oc - b * ray.direction_camera;
  const double r = s.radius_m();
  const double h = r * r - q.squaredNorm();
  if (h < 0.0) return false;
  const double root = std::sqrt(h);
  double t = -b - root;
  if (!Closer(t, t_min, *hit)) t = -b + root;
  if (!Closer(t, t_min, *hit)) return false;
  hit->t_m = t;
  hit->normal_camera = (oc + t * ray.direction_camera) / r;
  return true;
}

// Box by slabs (from memory; Kay and Kajiya's slab method): in the box's frame the ray
// enters slab i at (-+h_i - o_i) / d_i; the box is the intersection of three slabs, entered
// at the largest entry and left at the smallest exit. The face of the entry (or, from inside,
// of the exit) gives the normal.
bool IntersectBox(const RayPrimitive& box, const Ray& ray, double t_min, RayHit* hit) {
  const Eigen::Vector3d o = box.axes_camera.transpose() * (ray.origin_camera_m - box.center_camera_m);
  const Eigen::Vector3d d = box.axes_camera.transpose() * ray.direction_camera;
  double t_enter = -std::numeric_limits<double>::infinity();
  double t_exit = std::numeric_limits<double>::infinity();
  int enter_axis = -1;
  int exit_axis = -1;
  for (int i = 0; i < 3; ++i) {
    const double h = box.half_size_m[i];
    if (d[i] == 0.0) {
      if (std::abs(o[i]) > h) return false;
      continue;
    }
    const double t_a = (-h - o[i]) / d[i];
    const double t_b = (h - o[i]) / d[i];
    const double t_near = std::min(t_a, t_b);
    const double t_far = std::max(t_a, t_b);
    if (t_near > t_enter) {
      t_enter = t_near;
      enter_axis = i;
    }
    if (t_far < t_exit) {
      t_exit = t_far;
      exit_axis = i;
    }
  }
  if (t_enter > t_exit) return false;
  double t = t_enter;
  int axis = enter_axis;
  // Entering faces against the direction; the exit face along it.
  double sign = 0.0;
  if (Closer(t, t_min, *hit) && axis >= 0) {
    sign = d[axis] > 0.0 ? -1.0 : 1.0;
  } else {
    t = t_exit;
    axis = exit_axis;
    if (!Closer(t, t_min, *hit) || axis < 0) return false;
    sign = d[axis] > 0.0 ? 1.0 : -1.0;
  }
  hit->t_m = t;
  hit->normal_camera = sign * box.axes_camera.col(axis);
  return true;
}

// Capped cylinder of radius r about the axis a through c, |(p - c) . a| <= L / 2 (from
// memory). With the parts across the axis o_p = (o - c) - ((o - c) . a) a and
// d_p = d - (d . a) a, the side is the quadratic |o_p + t d_p|^2 = r^2; each cap is the
// plane (p - c) . a = +-L/2 inside the radius.
bool IntersectCylinder(const RayPrimitive& cyl, const Ray& ray, double t_min, RayHit* hit) {
  const Eigen::Vector3d axis = cyl.axes_camera.col(2);
  const double r = cyl.radius_m();
  const double half_length = cyl.half_size_m.z();
  const Eigen::Vector3d oc = ray.origin_camera_m - cyl.center_camera_m;
  const double o_along = oc.dot(axis);
  const double d_along = ray.direction_camera.dot(axis);
  const Eigen::Vector3d o_p = oc - o_along * axis;
  const Eigen::Vector3d d_p = ray.direction_camera - d_along * axis;
  bool found = false;
  const double a = d_p.squaredNorm();
  if (a > 0.0) {
    const double b = o_p.dot(d_p);
    // The discriminant through the closest approach across the axis, as for the sphere.
    const Eigen::Vector3d q = o_p - (b / a) * d_p;
    const double h = a * (r * r - q.squaredNorm());
    if (h >= 0.0) {
      const double root = std::sqrt(h);
      for (const double t : {(-b - root) / a, (-b + root) / a}) {
        if (!Closer(t, t_min, *hit) || std::abs(o_along + t * d_along) > half_length) continue;
        hit->t_m = t;
        hit->normal_camera = (o_p + t * d_p) / r;
        found = true;
        break;
      }
    }
  }
  if (d_along != 0.0) {
    for (const double cap : {-half_length, half_length}) {
      const double t = (cap - o_along) / d_along;
      if (!Closer(t, t_min, *hit) || (o_p + t * d_p).squaredNorm() > r * r) continue;
      hit->t_m = t;
      hit->normal_camera = cap > 0.0 ? axis : Eigen::Vector3d(-axis);
      found = true;
    }
  }
  return found;
}

// Disc of radius r, centre c, normal n (from memory): the plane (p - c) . n = 0 is met at
// t = (c - o) . n / (d . n), inside when |p - c| <= r. The painted side faces rays with
// d . n < 0.
bool IntersectDisc(const RayPrimitive& disc, const Ray& ray, double t_min, bool back_too,
                   RayHit* hit) {
  const Eigen::Vector3d n = disc.axes_camera.col(2);
  const double d_n = ray.direction_camera.dot(n);
  if (d_n == 0.0 || (!back_too && d_n > 0.0)) return false;
  const double t = (disc.center_camera_m - ray.origin_camera_m).dot(n) / d_n;
  if (!Closer(t, t_min, *hit)) return false;
  const Eigen::Vector3d p = ray.origin_camera_m + t * ray.direction_camera;
  const double r = disc.radius_m();
  if ((p - disc.center_camera_m).squaredNorm() > r * r) return false;
  hit->t_m = t;
  hit->normal_camera = d_n < 0.0 ? n : Eigen::Vector3d(-n);
  return true;
}

// The interval of X/Z (or Y/Z: `lateral` the centre's other coordinate) over a sphere: the
// planes through the camera's y (or x) axis tangent to it make angles theta -+ alpha with the
// optical axis, theta = atan2(c_lateral, c_z), sin(alpha) = r / sqrt(c_lateral^2 + c_z^2).
// False when the sphere reaches the plane Z = 0 in that section.
bool SphereInterval(double lateral, double depth, double r, double* lo, double* hi) {
  const double distance = std::hypot(lateral, depth);
  if (!(distance > r)) return false;
  const double theta = std::atan2(lateral, depth);
  const double alpha = std::asin(r / distance);
  constexpr double kLimit = 0.5 * M_PI - 1e-9;
  if (theta + alpha >= kLimit || theta - alpha <= -kLimit) return false;
  *lo = std::tan(theta - alpha);
  *hi = std::tan(theta + alpha);
  return true;
}

}  // namespace

bool IntersectRay(const RayPrimitive& primitive, const Ray& ray, double t_min_m, bool disc_back_too,
                  RayHit* hit) {
  switch (primitive.shape) {
    case RayShape::kSphere:
      return IntersectSphere(primitive, ray, t_min_m, hit);
    case RayShape::kCylinder:
      return IntersectCylinder(primitive, ray, t_min_m, hit);
    case RayShape::kBox:
      return IntersectBox(primitive, ray, t_min_m, hit);
    case RayShape::kDisc:
      return IntersectDisc(primitive, ray, t_min_m, disc_back_too, hit);
  }
  return false;
}

NormalisedBox ImageBounds(const RayPrimitive& primitive) {
  NormalisedBox box;
  const Eigen::Vector3d& c = primitive.center_camera_m;
  if (primitive.shape == RayShape::kSphere) {
    const double r = primitive.radius_m();
    box.unbounded = !SphereInterval(c.x(), c.z(), r, &box.x_min, &box.x_max) ||
                    !SphereInterval(c.y(), c.z(), r, &box.y_min, &box.y_max);
    return box;
  }
  box.x_min = box.y_min = std::numeric_limits<double>::infinity();
  box.x_max = box.y_max = -std::numeric_limits<double>::infinity();
  constexpr double kNearestDepthM = 1e-6;
  for (int i = 0; i < 8; ++i) {
    const Eigen::Vector3d sign((i & 1) ? 1.0 : -1.0, (i & 2) ? 1.0 : -1.0, (i & 4) ? 1.0 : -1.0);
    const Eigen::Vector3d corner =
        c + primitive.axes_camera * sign.cwiseProduct(primitive.half_size_m);
    if (!(corner.z() > kNearestDepthM)) {
      box.unbounded = true;
      return box;
    }
    box.x_min = std::min(box.x_min, corner.x() / corner.z());
    box.x_max = std::max(box.x_max, corner.x() / corner.z());
    box.y_min = std::min(box.y_min, corner.y() / corner.z());
    box.y_max = std::max(box.y_max, corner.y() / corner.z());
  }
  return box;
}

double BoundingRadius(const RayPrimitive& primitive) {
  switch (primitive.shape) {
    case RayShape::kSphere:
    case RayShape::kDisc:
      return primitive.radius_m();
    case RayShape::kCylinder:
      return std::hypot(primitive.radius_m(), primitive.half_size_m.z());
    case RayShape::kBox:
      return primitive.half_size_m.norm();
  }
  return 0.0;
}

}  // namespace tumbletrace
