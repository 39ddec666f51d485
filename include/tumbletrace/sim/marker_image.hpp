// How much of a marker's image the camera sees, and how much of that lies in shadow: the
// truth that goes with a ray-cast frame (truth_sightings.csv).
//
// The marker's own image (its ball, or the painted side of its disc, alone) is sampled on a
// regular grid of rays over its image bounds on the normalised plane; a sample counts as
// visible when its pixel lies in the frame and (with occlusion) no other solid is met before
// the marker, and as shadowed when, besides, the point faces the light and the way to the
// light is blocked by another solid (a cast shadow; the side of a ball turned from the light
// is not counted). The grid is even on the normalised plane, which over a marker's small
// image is even in pixels to within the lens's change of scale across it.
#pragma once

#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/sim/raycast.hpp"

namespace tumbletrace {

struct MarkerImageFractions {
  double visible = 0.0;   // of the marker's own image: in the frame and not hidden, 0..1
  double shadowed = 0.0;  // of the visible part: in a cast shadow, 0..1 (0 when nothing visible)
};

struct MarkerImageOptions {
  bool occlusion = true;   // other solids hide the marker (as RaycastSettings::occlusion)
  bool shadows = true;     // other solids shadow it (as RaycastSettings::shadows)
  int grid_per_axis = 24;  // samples per axis over the image bounds, >= 2
};

// The fractions of scene.solids[solid]'s image. A solid whose image is unbounded (it reaches
// the camera's plane) or empty (a disc seen from behind) has none: both fractions 0.
MarkerImageFractions SampleMarkerImage(const RayScene& scene, int solid,
                                       const CameraIntrinsics& intrinsics,
                                       const MarkerImageOptions& options);

}  // namespace tumbletrace
