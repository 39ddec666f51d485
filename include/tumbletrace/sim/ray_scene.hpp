// The body as the ray caster sees it at one instant: its parts (cylinders, boxes, spheres;
// point masses have no surface) and its markers (a ball of the marker's diameter, or a flat
// disc when the marker has a normal) placed in a camera's frame.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/sim/motion.hpp"
#include "tumbletrace/sim/raycast.hpp"
#include "tumbletrace/sim/shading.hpp"

namespace tumbletrace {

// The solids of `body` with its CM (at cm_body_m in the body frame) in `state`, seen from
// `camera_from_world`, lit from `towards_light_world` (unit). The parts come first, in the
// body's order, then the markers in the body's order, except those with `left_out[i]` true
// (markers hidden by something that is no part of the body; `left_out` may be empty).
RayScene BodyRayScene(const Body& body, const Eigen::Vector3d& cm_body_m, const RigidState& state,
                      const RigidTransform& camera_from_world, MarkerMaterial marker_kind,
                      const Eigen::Vector3d& towards_light_world, const std::vector<bool>& left_out);

// The solid of one part in the camera frame, given the camera-from-body rotation and the
// camera-frame position of the body frame's origin; false for a point mass.
bool PartSolid(const Part& part, const Eigen::Matrix3d& camera_from_body,
               const Eigen::Vector3d& body_origin_camera_m, RayPrimitive* solid);

// The solid of one marker, likewise.
RayPrimitive MarkerSolid(const Marker& marker, const Eigen::Matrix3d& camera_from_body,
                         const Eigen::Vector3d& body_origin_camera_m);

// The index of the solid of marker `marker_index` in a BodyRayScene, or -1 when left out.
int MarkerSolidIndex(const RayScene& scene, int marker_index);

}  // namespace tumbletrace
