// Shading of lit points: Lambert's cosine law, the Blinn-Phong highlight, retro-reflectors.
#include "tumbletrace/sim/shading.hpp"

#include <gtest/gtest.h>

#include <cmath>

namespace tumbletrace {
namespace {

Lighting Light() {
  Lighting light;
  light.ambient = 0.2;
  light.diffuse = 0.8;
  light.specular = 0.5;
  light.shininess = 30;
  return light;
}

// A point whose normal is turned `angle_rad` from the light, seen from along the normal.
ShadingGeometry TurnedFromLight(double angle_rad, bool lit = true) {
  ShadingGeometry at;
  at.normal = Eigen::Vector3d(0, 0, -1);
  at.towards_camera = Eigen::Vector3d(0, 0, -1);
  at.towards_light = Eigen::Vector3d(std::sin(angle_rad), 0, -std::cos(angle_rad));
  at.lit = lit;
  return at;
}

// Lambert's cosine law (J. H. Lambert, Photometria, 1760): diffuse light goes as cos(angle).
TEST(ShadeFraction, LambertFollowsTheCosineOfIncidence) {
  const Lighting light = Light();
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kBody, light, TurnedFromLight(0.0)), 1.0, 1e-12);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kMatteMarker, light, TurnedFromLight(M_PI / 3)), 0.6, 1e-12);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kBody, light, TurnedFromLight(0.6 * M_PI)), 0.2, 1e-12);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kBody, light, TurnedFromLight(0.0, false)), 0.2, 1e-12);
}

// Blinn-Phong (J. F. Blinn, SIGGRAPH 1977): the highlight peaks where n = h, falls as
// (n . h)^shininess; a matte dot has none.
TEST(ShadeFraction, GlossyMarkersAddTheBlinnPhongHighlight) {
  const Lighting light = Light();
  // Light straight from the camera: h = n.
  const ShadingGeometry head_on = TurnedFromLight(0.0);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kGlossyMarker, light, head_on), 1.5, 1e-12);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kMatteMarker, light, head_on), 1.0, 1e-12);
  // Light 40 degrees off: h is 20 degrees off n.
  const ShadingGeometry off = TurnedFromLight(40 * M_PI / 180);
  const double expected = 0.2 + 0.8 * std::cos(40 * M_PI / 180) + 0.5 * std::pow(std::cos(20 * M_PI / 180), 30);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kGlossyMarker, light, off), expected, 1e-12);
  // In shadow: no highlight.
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kGlossyMarker, light, TurnedFromLight(0.0, false)), 0.2, 1e-12);
}

TEST(ShadeFraction, RetroReflectorsIgnoreTheLight) {
  const Lighting light = Light();
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kRetroMarker, light, TurnedFromLight(0.0)), 1.0, 1e-12);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kRetroMarker, light, TurnedFromLight(2.0, false)), 1.0, 1e-12);
  ShadingGeometry rim = TurnedFromLight(0.0);
  rim.towards_camera = Eigen::Vector3d(1, 0, 0);
  EXPECT_NEAR(ShadeFraction(SurfaceKind::kRetroMarker, light, rim), 0.9, 1e-12);
}

TEST(NeedsShadowRay, OnlyLitSidesOfShadedSurfaces) {
  const Eigen::Vector3d n(0, 0, -1);
  EXPECT_TRUE(NeedsShadowRay(SurfaceKind::kBody, n, Eigen::Vector3d(0, 0, -1)));
  EXPECT_FALSE(NeedsShadowRay(SurfaceKind::kBody, n, Eigen::Vector3d(0, 0, 1)));
  EXPECT_FALSE(NeedsShadowRay(SurfaceKind::kRetroMarker, n, Eigen::Vector3d(0, 0, -1)));
  EXPECT_EQ(MarkerSurface(MarkerMaterial::kMatte), SurfaceKind::kMatteMarker);
  EXPECT_EQ(MarkerSurface(MarkerMaterial::kGlossy), SurfaceKind::kGlossyMarker);
  EXPECT_EQ(MarkerSurface(MarkerMaterial::kRetro), SurfaceKind::kRetroMarker);
}

}  // namespace
}  // namespace tumbletrace
