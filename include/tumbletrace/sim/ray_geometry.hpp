// The solids the ray caster meets (raycast.hpp): spheres, capped cylinders, boxes and flat
// discs, each placed in the camera frame, with the intersection of a ray and the bounds of
// their images on the normalised image plane (x, y) = (X/Z, Y/Z).
//
// Every solid is convex, so a ray leaving its surface towards the outside never meets it
// again (shadow rays need not test the solid they start from).
#pragma once

#include <Eigen/Core>
#include <limits>

namespace tumbletrace {

enum class RayShape { kSphere, kCylinder, kBox, kDisc };

// One solid in the camera frame.
struct RayPrimitive {
  RayShape shape = RayShape::kSphere;
  // Sphere, box, disc: the centre; cylinder: the middle of its axis.
  Eigen::Vector3d center_camera_m = Eigen::Vector3d::Zero();
  // Box: columns are its edge directions; cylinder: column 2 is the axis; disc: column 2 is
  // the outward normal (the painted side). Orthonormal, right-handed.
  Eigen::Matrix3d axes_camera = Eigen::Matrix3d::Identity();
  // Box: half edge lengths along the axes' columns; cylinder: (r, r, half length);
  // sphere and disc: (r, r, 0).
  Eigen::Vector3d half_size_m = Eigen::Vector3d::Zero();

  double radius_m() const { return half_size_m.x(); }
};

// A ray p(t) = origin + t direction, direction of unit length, so that t is in metres.
struct Ray {
  Eigen::Vector3d origin_camera_m = Eigen::Vector3d::Zero();
  Eigen::Vector3d direction_camera = Eigen::Vector3d::UnitZ();
};

struct RayHit {
  double t_m = std::numeric_limits<double>::infinity();
  Eigen::Vector3d normal_camera = Eigen::Vector3d::Zero();  // outward, unit
};

// The nearest point of `primitive` on `ray` with t_min_m < t < hit->t_m; on success fills
// `hit` and returns true. A disc is one-sided for camera rays (`disc_back_too` false): only
// its painted side, the side its normal points to, is met; shadow rays pass
// `disc_back_too` true (the disc blocks light from either side).
bool IntersectRay(const RayPrimitive& primitive, const Ray& ray, double t_min_m, bool disc_back_too,
                  RayHit* hit);

// An axis-aligned box on the normalised image plane; `unbounded` when part of the solid
// lies at or behind the camera's plane Z = 0 (its image is then not bounded).
struct NormalisedBox {
  double x_min = 0.0;
  double y_min = 0.0;
  double x_max = 0.0;
  double y_max = 0.0;
  bool unbounded = false;

  bool Contains(double x, double y) const {
    return unbounded || (x >= x_min && x <= x_max && y >= y_min && y <= y_max);
  }
  bool Overlaps(const NormalisedBox& other) const {
    return unbounded || other.unbounded ||
           (x_min <= other.x_max && other.x_min <= x_max && y_min <= other.y_max &&
            other.y_min <= y_max);
  }
};

// A box that holds the image of the solid: exact for a sphere (the tangent planes through
// the camera's x and y axes), the image of the bounding box's corners for the other shapes
// (a central projection maps the convex hull of points onto the convex hull of their images).
NormalisedBox ImageBounds(const RayPrimitive& primitive);

// The radius of a sphere about the primitive's centre that holds it (for quick rejection).
double BoundingRadius(const RayPrimitive& primitive);

}  // namespace tumbletrace
