// Invented realistic throws for the imaging study: tools of 250-450 mm built from parts
// (a handle with a head, a flat bar with end blocks, a grip with a blade, a shaft with a
// cross head), 5-9 spherical markers sitting on the parts' surfaces, filmed at 1000
// frames/s from 2 m with markers of 6-10 px, one-sided light, H.264. Every value is drawn
// from a fixed seed; none describes a real product.
//
// Kinds of throw: a planar spin (about the largest principal axis, facing the camera), a
// wobble (that spin tilted by 8-20 degrees), a flip (near the intermediate axis), a release
// (the hand pushes the body for the first 30-50 ms) and an impact (a bounce off a wall at
// 70-85 % of the clip).
#pragma once

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "support/scenarios.hpp"
#include "tumbletrace/model/mass_properties.hpp"
#include "tumbletrace/sim/scenario.hpp"

namespace tumbletrace::testing {

enum class ThrowKind { kPlanar, kWobble, kFlip, kRelease, kImpact };

inline const char* ThrowKindName(ThrowKind kind) {
  switch (kind) {
    case ThrowKind::kPlanar: return "planar";
    case ThrowKind::kWobble: return "wobble";
    case ThrowKind::kFlip: return "flip";
    case ThrowKind::kRelease: return "release";
    case ThrowKind::kImpact: return "impact";
  }
  return "?";
}

// The kind of throw number `index` of a study: the five kinds in turn.
inline ThrowKind StudyThrowKind(int index) { return static_cast<ThrowKind>(index % 5); }

namespace realistic_detail {

using Rng = std::mt19937_64;
inline double Uniform(Rng& rng, double lo, double hi) {
  return std::uniform_real_distribution<double>(lo, hi)(rng);
}

inline Part Cylinder(const std::string& name, const Eigen::Vector3d& from_m, const Eigen::Vector3d& axis,
                     double length_m, double diameter_m, double density) {
  Part p;
  p.shape = PartShape::kCylinder;
  p.name = name;
  p.from_body_m = from_m;
  p.axis_body = axis.normalized();
  p.length_m = length_m;
  p.diameter_m = diameter_m;
  p.density_kgpm3 = density;
  return p;
}

inline Part Box(const std::string& name, const Eigen::Vector3d& center_m, const Eigen::Vector3d& size_m,
                double density) {
  Part p;
  p.shape = PartShape::kBox;
  p.name = name;
  p.center_body_m = center_m;
  p.size_m = size_m;
  p.density_kgpm3 = density;
  return p;
}

// A point on a part's surface and the outward normal there; `facing_z` prefers the +z side
// (the side the camera sees at launch).
inline void SurfacePoint(const Part& part, Rng& rng, bool facing_z, Eigen::Vector3d* at_m,
                         Eigen::Vector3d* normal) {
  if (part.shape == PartShape::kCylinder) {
    const Eigen::Vector3d a = part.axis_body;
    Eigen::Vector3d u = a.cross(Eigen::Vector3d::UnitZ());
    if (u.norm() < 1e-6) u = Eigen::Vector3d::UnitX();
    u.normalize();
    const Eigen::Vector3d v = a.cross(u);  // +z where a is horizontal in the body
    const double along = Uniform(rng, 0.08, 0.92) * part.length_m;
    const double phi = facing_z ? Uniform(rng, -0.9, 0.9) : Uniform(rng, 0.9, 2 * M_PI - 0.9);
    *normal = (std::cos(phi) * (v.z() >= 0 ? v : Eigen::Vector3d(-v)) + std::sin(phi) * u).normalized();
    *at_m = part.from_body_m + along * a + 0.5 * part.diameter_m * *normal;
    return;
  }
  // A box: the +z face, or one of the other five.
  const int face = facing_z ? 4 : std::uniform_int_distribution<int>(0, 5)(rng);
  const int axis = face / 2;
  const double sign = (face % 2 == 0) ? 1.0 : -1.0;
  Eigen::Vector3d local;
  for (int k = 0; k < 3; ++k) local[k] = Uniform(rng, -0.38, 0.38) * part.size_m[k];
  local[axis] = 0.5 * sign * part.size_m[axis];
  *normal = sign * Eigen::Vector3d::Unit(axis);
  *at_m = part.center_body_m + local;
}

}  // namespace realistic_detail

// A tool of `length_m` (0.25-0.45 m) of one of four shapes, its parts along body x.
inline std::vector<Part> RealisticToolParts(std::uint64_t seed, double* length_out_m) {
  using namespace realistic_detail;
  Rng rng(seed * 1000003ULL + 17);
  const double length = Uniform(rng, 0.25, 0.45);
  *length_out_m = length;
  const int shape = std::uniform_int_distribution<int>(0, 3)(rng);
  const double wood = Uniform(rng, 550, 800), steel = 7850, alu = 2700;
  std::vector<Part> parts;
  switch (shape) {
    case 0: {  // handle and a head across it (hammer-like)
      const double d = Uniform(rng, 0.022, 0.032);
      const double head_x = Uniform(rng, 0.025, 0.04);
      parts.push_back(Cylinder("handle", {0, 0, 0}, Eigen::Vector3d::UnitX(), length - head_x, d, wood));
      parts.push_back(Box("head", {length - 0.5 * head_x, 0, 0},
                          {head_x, Uniform(rng, 0.07, 0.11), Uniform(rng, 0.02, 0.03)}, steel));
      break;
    }
    case 1: {  // a flat bar with a block at each end (wrench-like)
      const double w = Uniform(rng, 0.022, 0.035), t = Uniform(rng, 0.006, 0.01);
      parts.push_back(Box("bar", {0.5 * length, 0, 0}, {length, w, t}, steel));
      parts.push_back(Box("jaw", {0.03, 0.01, 0}, {0.06, w + 0.025, t + 0.006}, steel));
      parts.push_back(Box("ring", {length - 0.025, 0, 0}, {0.05, w + 0.012, t + 0.004}, steel));
      break;
    }
    case 2: {  // a grip and a blade (paddle-like)
      const double grip = Uniform(rng, 0.09, 0.13);
      parts.push_back(Cylinder("grip", {0, 0, 0}, Eigen::Vector3d::UnitX(), grip, Uniform(rng, 0.026, 0.034), 900));
      parts.push_back(Box("blade", {grip + 0.5 * (length - grip), 0, 0},
                          {length - grip, Uniform(rng, 0.08, 0.12), Uniform(rng, 0.012, 0.018)}, wood));
      break;
    }
    default: {  // a shaft with a cross head (mallet-like)
      const double head_d = Uniform(rng, 0.045, 0.06);
      parts.push_back(Cylinder("shaft", {0, 0, 0}, Eigen::Vector3d::UnitX(), length - head_d, Uniform(rng, 0.02, 0.026), alu));
      parts.push_back(Cylinder("head", {length - 0.5 * head_d, -0.06, 0}, Eigen::Vector3d::UnitY(), 0.12, head_d, wood));
      break;
    }
  }
  return parts;
}

// 5-9 spherical markers of 10-14 mm on the parts' surfaces, at least 2.5 diameters apart,
// most on the side the camera sees at launch (+z), some elsewhere.
inline std::vector<Marker> RealisticMarkers(const std::vector<Part>& parts, std::uint64_t seed) {
  using namespace realistic_detail;
  Rng rng(seed * 7919ULL + 3);
  const int count = std::uniform_int_distribution<int>(5, 9)(rng);
  const double diameter = Uniform(rng, 0.010, 0.014);
  std::vector<Marker> markers;
  for (int attempt = 0; attempt < 2000 && static_cast<int>(markers.size()) < count; ++attempt) {
    const Part& part = parts[std::uniform_int_distribution<std::size_t>(0, parts.size() - 1)(rng)];
    const bool facing = markers.size() < 4 || Uniform(rng, 0, 1) < 0.6;
    Eigen::Vector3d at, normal;
    SurfacePoint(part, rng, facing, &at, &normal);
    const Eigen::Vector3d centre = at + 0.5 * diameter * normal;  // the sphere sits on the surface
    const bool apart = std::all_of(markers.begin(), markers.end(), [&](const Marker& m) {
      return (m.at_body_m - centre).norm() > 2.5 * diameter;
    });
    if (!apart) continue;
    Marker m;
    m.id = static_cast<int>(markers.size()) + 1;
    m.at_body_m = centre;
    m.diameter_m = diameter;
    m.normal_body = normal;  // the surface's: a flat dot's normal (ApplyLook drops it for spheres)
    markers.push_back(m);
  }
  return markers;
}

// Camera 2 m from the flight plane (world x-z), facing it: 1024 x 768, f = 1400 px, a
// slight barrel distortion. A 12 mm marker is about 8 px across.
inline Camera StudyCamera() {
  Camera camera = FacingCamera();
  camera.intrinsics.distortion = {-0.06, 0.015, 0.0, 0.0, 0.0};
  camera.camera_from_world->translation_m = Eigen::Vector3d(0, 0, 2.0);
  return camera;
}

// How the markers look: shaded spheres that the body hides and shadows (the realistic
// case), flat dots painted on the surface, or spheres always fully visible (no
// self-occlusion, no shadows: the simulator's kindest case).
enum class MarkerLook { kShadedSpheres, kFlatDots, kAlwaysVisible };

inline const char* MarkerLookName(MarkerLook look) {
  switch (look) {
    case MarkerLook::kShadedSpheres: return "shaded-spheres";
    case MarkerLook::kFlatDots: return "flat-dots";
    case MarkerLook::kAlwaysVisible: return "always-visible";
  }
  return "?";
}

// Sets the markers' kind and the renderer's for `look`: always the ray caster with the
// scenario's light; spheres are glossy, dots matte paint.
inline void ApplyLook(Scenario* s, MarkerLook look) {
  for (Marker& m : s->body.markers) {
    if (look != MarkerLook::kFlatDots) m.normal_body.reset();
  }
  s->render.mode = RenderMode::kRaycast;
  s->render.marker_kind = look == MarkerLook::kFlatDots ? MarkerMaterial::kMatte : MarkerMaterial::kGlossy;
  s->render.occlusion = look != MarkerLook::kAlwaysVisible;
  s->render.shadows = look != MarkerLook::kAlwaysVisible;
}

// Throw number `seed` of kind `kind`.
inline Scenario RealisticThrow(std::uint64_t seed, ThrowKind kind) {
  using namespace realistic_detail;
  Rng rng(seed * 104729ULL + static_cast<std::uint64_t>(kind));
  Scenario s;
  double length = 0.3;
  s.body.parts = RealisticToolParts(seed, &length);
  s.body.markers = RealisticMarkers(s.body.parts, seed);
  s.body.references_body_m["grip_end"] = Eigen::Vector3d::Zero();
  s.camera = StudyCamera();
  s.capture_fps = 1000;
  s.frames = 250;
  s.exposure_s = 0.0002;
  s.seed = seed;
  s.tracks_sigma_px = 0.0;
  s.image_sigma_levels = 2.0;
  s.video.write = true;
  ApplyLook(&s, MarkerLook::kShadedSpheres);
  // One-sided light from the camera's side of the flight, 30-80 degrees to the left or
  // right of the line of sight and 20-60 degrees up.
  {
    const double side = Uniform(rng, 0, 1) < 0.5 ? -1.0 : 1.0;
    const double azimuth = side * Uniform(rng, 30, 80) * M_PI / 180;
    const double elevation = Uniform(rng, 20, 60) * M_PI / 180;
    s.light.towards_light_world = Eigen::Vector3d(std::cos(elevation) * std::sin(azimuth),
                                                  -std::cos(elevation) * std::cos(azimuth), std::sin(elevation));
  }

  // Orientation: the largest principal axis towards the camera (world -y) for the spins.
  const MassProperties mass = CombineParts(s.body.parts);
  const PrincipalAxes principal = Principal(mass.inertia_about_cm_kgm2);
  Eigen::Matrix3d axes = principal.axes_body;  // columns: axes 1, 2, 3 in the body
  if (axes.col(2).z() < 0) {  // axis 3 out of the marked (+z) side
    axes.col(2) = -axes.col(2);
    axes.col(1) = -axes.col(1);
  }
  const double rate_revps = Uniform(rng, 4.0, 9.0);
  Eigen::Vector3d spin_axis_body = axes.col(2);
  if (kind == ThrowKind::kWobble) {
    const double tilt = Uniform(rng, 8, 20) * M_PI / 180, phi = Uniform(rng, 0, 2 * M_PI);
    spin_axis_body = (std::cos(tilt) * axes.col(2) +
                      std::sin(tilt) * (std::cos(phi) * axes.col(0) + std::sin(phi) * axes.col(1)))
                         .normalized();
  } else if (kind == ThrowKind::kFlip) {
    const double tilt = Uniform(rng, 3, 8) * M_PI / 180, phi = Uniform(rng, 0, 2 * M_PI);
    spin_axis_body = (std::cos(tilt) * axes.col(1) +
                      std::sin(tilt) * (std::cos(phi) * axes.col(0) + std::sin(phi) * axes.col(2)))
                         .normalized();
  }
  s.launch_omega_body_radps = 2 * M_PI * rate_revps * spin_axis_body;
  // Body -> world: axis 3 to world -y (the camera), turned about it at random.
  const Eigen::Quaterniond to_camera =
      Eigen::Quaterniond::FromTwoVectors(axes.col(2), -Eigen::Vector3d::UnitY());
  s.launch_world_from_body =
      Eigen::AngleAxisd(Uniform(rng, 0, 2 * M_PI), Eigen::Vector3d::UnitY()) * to_camera;
  if (kind == ThrowKind::kFlip) {  // show the broad side while it flips
    s.launch_world_from_body =
        Eigen::AngleAxisd(Uniform(rng, -0.3, 0.3), Eigen::Vector3d::UnitZ()) * s.launch_world_from_body;
  }
  s.launch_cm_world_m = Eigen::Vector3d(Uniform(rng, -0.30, -0.26), Uniform(rng, -0.05, 0.05), Uniform(rng, -0.12, -0.05));
  s.launch_velocity_world_mps = Eigen::Vector3d(Uniform(rng, 2.0, 2.4), 0.0, Uniform(rng, 1.3, 1.8));

  if (kind == ThrowKind::kRelease) {
    ScenarioHand hand;
    hand.release_time_s = Uniform(rng, 0.030, 0.050) + 0.0005;
    hand.acceleration_mps2 = Eigen::Vector3d(Uniform(rng, 60, 120), 0, Uniform(rng, 30, 70));
    hand.angular_acceleration_body_radps2 = -Uniform(rng, 200, 400) * spin_axis_body;
    s.hand = hand;
  } else if (kind == ThrowKind::kImpact) {
    ScenarioImpact wall;
    wall.time_s = std::floor(Uniform(rng, 0.70, 0.85) * s.frames) / s.capture_fps + 0.0005;
    wall.normal_world = Eigen::Vector3d(-1, 0, 0);
    wall.restitution = Uniform(rng, 0.3, 0.6);
    wall.spin_kept = Uniform(rng, 0.4, 0.8);
    s.impact = wall;
  }
  return s;
}

}  // namespace tumbletrace::testing
