// Synthetic frames by ray casting: every sample of a pixel sends its camera ray (through the
// lens, lens_rays.hpp) into the scene of solids (ray_geometry.hpp); the nearest one met is
// shaded (shading.hpp), lit or, when the way to the light is blocked, in shadow. So the body
// hides markers behind it (partly, at its outline), one marker hides another, and the body
// casts shadows on the markers and on itself.
//
// The renderer knows nothing of bodies: the simulator places the solids in the camera frame
// for each instant sampled inside the exposure (ray_scene.hpp). Each pixel is the average of
// s x s samples (at offsets (i + 0.5) / s - 0.5 from its centre, as the flat renderer's) over
// all the instants, of the background where a sample meets nothing. Only pixels near the
// solids' images are cast (tiles of 8 x 8 pixels are kept when some solid's image bounds meet
// them), so the cost grows with the body's image, not with the frame.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <opencv2/core.hpp>
#include <vector>

#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/sim/ray_geometry.hpp"
#include "tumbletrace/sim/render.hpp"
#include "tumbletrace/sim/shading.hpp"

namespace tumbletrace {

// A solid of the scene and what it is made of.
struct SceneSolid {
  RayPrimitive primitive;
  SurfaceKind surface = SurfaceKind::kBody;
  int marker = -1;  // the index of the marker it draws in the body's list, -1 for a part
};

// One instant inside the exposure, everything in the camera frame.
struct RayScene {
  std::vector<SceneSolid> solids;
  Eigen::Vector3d towards_light_camera = Eigen::Vector3d(0, 0, -1);  // unit
  // Spots that are no part of the scene (glints), drawn over it at the dot level: a sample
  // inside the ellipse (p - c)^T S^-1 (p - c) <= 1 (pixels) shows the dot's level.
  std::vector<RenderedDot> overlay_dots;
};

struct RaycastSettings {
  int width_px = 1024;
  int height_px = 768;
  double background_level = 40.0;   // grey levels of 8-bit output, 0..255
  double body_level = 70.0;         // the body's level where it faces the light squarely
  double dot_level = 230.0;         // the markers' (their albedo is the higher)
  int supersampling = 4;            // samples per pixel and axis, 1..16
  double noise_sigma_levels = 2.0;  // Gaussian sensor noise, grey levels (0: none)
  double background_gradient = 10.0;  // left-to-right ramp of the background, levels
  std::uint64_t noise_seed = 1;     // the frame's own seed: same seed, same frame
  Lighting lighting;                // coefficients; the direction comes with each RayScene
  bool occlusion = true;  // false: markers are drawn over the body and each other (the
                          // nearer marker first), never hidden
  bool shadows = true;    // false: every point is lit as if nothing blocked the light
};

// A marker on a part's surface (a painted disc in the part's face, a ball set into it) is
// met at the same depth as the part up to rounding: within this depth the marker wins.
inline constexpr double kMarkerDepthTieM = 1e-6;

// Rays leaving a surface for the light start this far along, past the surface's rounding.
inline constexpr double kShadowRayStartM = 1e-7;

// The solid a camera ray meets, among `candidates` (indices into scene.solids; all when
// empty is not meant: pass every index). With `occlusion`, the nearest (a marker wins a tie
// within kMarkerDepthTieM); without, the nearest marker if any, else the nearest part. Discs
// are met on their painted side only. Returns the solid's index, or -1.
int NearestSolid(const RayScene& scene, const std::vector<int>& candidates, const Ray& ray,
                 bool occlusion, RayHit* hit);

// True when the ray from `point_camera_m` towards the light meets any solid other than
// `solid` (its own surface cannot block it: every solid is convex).
bool LightBlocked(const RayScene& scene, int solid, const Eigen::Vector3d& point_camera_m);

// The grey level of a camera ray (unit direction) that meets `solid` at `hit`.
double ShadedLevel(const RayScene& scene, int solid, const Ray& ray, const RayHit& hit,
                   const RaycastSettings& settings);

// Renders one 8-bit single-channel frame as the average of the instants (equal weights);
// an empty list gives the background only. Throws std::invalid_argument for bad settings.
cv::Mat RaycastFrame(const std::vector<RayScene>& exposure, const CameraIntrinsics& intrinsics,
                     const RaycastSettings& settings);

}  // namespace tumbletrace
