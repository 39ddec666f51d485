// How bright a surface point looks: one directional light with ambient light, Lambert's
// diffuse law and a Blinn-Phong highlight, or a retro-reflector lit from the camera.
#pragma once

#include <Eigen/Core>

namespace tumbletrace {

// One distant light (a window, a lamp far away) and the ambient light of the room. Grey
// levels are `level * (ambient + diffuse * cos)` for a point that faces the light at angle
// `acos(cos)`, so that ambient + diffuse = 1 gives a surface facing the light its level.
struct Lighting {
  // Unit direction from the scene towards the light, in the world frame. The default comes
  // from the camera's upper left and front in the test scenarios' world (z up, the camera
  // on -y): markers are lit from one side.
  Eigen::Vector3d towards_light_world = Eigen::Vector3d(-0.6, -0.5, 0.62).normalized();
  double ambient = 0.25;    // fraction of the level where no direct light falls
  double diffuse = 0.75;    // fraction of the level added by direct light, times cos
  double specular = 0.4;    // peak of the highlight on glossy markers, fraction of their level
  double shininess = 40.0;  // Blinn-Phong exponent of the highlight (larger: smaller, sharper)
};

// What the markers are made of.
enum class MarkerMaterial {
  kGlossy,  // `sphere`: a glossy white ball or dot: Lambert plus a Blinn-Phong highlight
  kMatte,   // `flat`: a matte painted dot: Lambert only
  kRetro,   // `retro`: retro-reflective, lit by a ring light at the lens: nearly uniform, no shadow
};

// What a surface point is.
enum class SurfaceKind { kBody, kGlossyMarker, kMatteMarker, kRetroMarker };

SurfaceKind MarkerSurface(MarkerMaterial kind);

// The geometry of one lit point, all unit vectors in one frame.
struct ShadingGeometry {
  Eigen::Vector3d normal;        // outward surface normal
  Eigen::Vector3d towards_light;
  Eigen::Vector3d towards_camera;
  bool lit = true;  // false: the way to the light is blocked (cast shadow)
};

// The fraction of the surface's level the point shows (may exceed 1 in a highlight):
//   body, matte: ambient + diffuse * max(0, n . l) * lit                    (Lambert)
//   glossy:      the same + specular * max(0, n . h)^shininess * lit,  h = (l + v) / |l + v|,
//                where n . l > 0                                          (Blinn-Phong)
//   retro:       0.9 + 0.1 * max(0, n . v), whatever the light            (a ring light)
// Lambert's cosine law (J. H. Lambert, Photometria, 1760) and the half-vector highlight of
// J. F. Blinn, "Models of light reflection for computer synthesized pictures", SIGGRAPH 1977.
// The retro-reflector's faint fall-off towards its rim is invented (common practice).
double ShadeFraction(SurfaceKind surface, const Lighting& lighting, const ShadingGeometry& at);

// Whether a point's way to the light matters for its shade (retro-reflectors ignore it,
// and a point turned away from the light gets ambient light only anyway).
bool NeedsShadowRay(SurfaceKind surface, const Eigen::Vector3d& normal,
                    const Eigen::Vector3d& towards_light);

}  // namespace tumbletrace
