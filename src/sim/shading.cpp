// Shading of lit surface points (include/tumbletrace/sim/shading.hpp).
#include "tumbletrace/sim/shading.hpp"

#include <algorithm>
#include <cmath>

namespace tumbletrace {

SurfaceKind MarkerSurface(MarkerMaterial kind) {
  switch (kind) {
    case MarkerMaterial::kGlossy:
      return SurfaceKind::kGlossyMarker;
    case MarkerMaterial::kMatte:
      return SurfaceKind::kMatteMarker;
    case MarkerMaterial::kRetro:
      return SurfaceKind::kRetroMarker;
  }
  return SurfaceKind::kGlossyMarker;
}

double ShadeFraction(SurfaceKind surface, const Lighting& lighting, const ShadingGeometry& at) {
  if (surface == SurfaceKind::kRetroMarker) {
    // A ring light at the lens: brightest where the surface faces the camera (invented).
    return 0.9 + 0.1 * std::max(0.0, at.normal.dot(at.towards_camera));
  }
  const double n_l = at.normal.dot(at.towards_light);
  if (!at.lit || n_l <= 0.0) return lighting.ambient;
  // Lambert: the irradiance of a surface is proportional to the cosine of the incidence.
  double fraction = lighting.ambient + lighting.diffuse * n_l;
  if (surface == SurfaceKind::kGlossyMarker) {
    // Blinn-Phong: the highlight falls off as (n . h)^shininess about the half vector.
    const Eigen::Vector3d half = (at.towards_light + at.towards_camera).normalized();
    const double n_h = std::max(0.0, at.normal.dot(half));
    fraction += lighting.specular * std::pow(n_h, lighting.shininess);
  }
  return fraction;
}

bool NeedsShadowRay(SurfaceKind surface, const Eigen::Vector3d& normal,
                    const Eigen::Vector3d& towards_light) {
  return surface != SurfaceKind::kRetroMarker && normal.dot(towards_light) > 0.0;
}

}  // namespace tumbletrace
