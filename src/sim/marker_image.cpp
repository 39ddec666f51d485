// The visible and shadowed fractions of a marker's image (include/tumbletrace/sim/marker_image.hpp).
#include "tumbletrace/sim/marker_image.hpp"

#include <numeric>
#include <stdexcept>

namespace tumbletrace {
namespace {

// Pixel (x, y) lies in the image when it falls in [-0.5, W - 0.5) x [-0.5, H - 0.5).
bool InFrame(const CameraIntrinsics& k, double x_n, double y_n) {
  const double p[3] = {x_n, y_n, 1.0};
  double px[2];
  ProjectCameraPoint(k, p, px);
  return px[0] >= -0.5 && px[0] < k.width_px - 0.5 && px[1] >= -0.5 && px[1] < k.height_px - 0.5;
}

}  // namespace

MarkerImageFractions SampleMarkerImage(const RayScene& scene, int solid,
                                       const CameraIntrinsics& intrinsics,
                                       const MarkerImageOptions& options) {
  if (options.grid_per_axis < 2) throw std::invalid_argument("SampleMarkerImage: grid_per_axis < 2");
  const RayPrimitive& marker = scene.solids.at(solid).primitive;
  const NormalisedBox bounds = ImageBounds(marker);
  MarkerImageFractions fractions;
  if (bounds.unbounded) return fractions;
  std::vector<int> everyone(scene.solids.size());
  std::iota(everyone.begin(), everyone.end(), 0);
  const int g = options.grid_per_axis;
  int image = 0, visible = 0, shadowed = 0;
  for (int j = 0; j < g; ++j) {
    const double y = bounds.y_min + (j + 0.5) / g * (bounds.y_max - bounds.y_min);
    for (int i = 0; i < g; ++i) {
      const double x = bounds.x_min + (i + 0.5) / g * (bounds.x_max - bounds.x_min);
      const Ray ray{Eigen::Vector3d::Zero(), Eigen::Vector3d(x, y, 1.0).normalized()};
      RayHit own;
      if (!IntersectRay(marker, ray, 0.0, false, &own)) continue;
      ++image;
      if (!InFrame(intrinsics, x, y)) continue;
      if (options.occlusion) {
        RayHit nearest;
        if (NearestSolid(scene, everyone, ray, true, &nearest) != solid) continue;
      }
      ++visible;
      const Eigen::Vector3d point = own.t_m * ray.direction_camera;
      if (options.shadows && own.normal_camera.dot(scene.towards_light_camera) > 0.0 &&
          LightBlocked(scene, solid, point)) {
        ++shadowed;
      }
    }
  }
  if (image == 0) return fractions;
  fractions.visible = static_cast<double>(visible) / image;
  fractions.shadowed = visible > 0 ? static_cast<double>(shadowed) / visible : 0.0;
  return fractions;
}

}  // namespace tumbletrace
