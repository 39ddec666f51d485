// The body's solids in a camera's frame (include/tumbletrace/sim/ray_scene.hpp).
#include "tumbletrace/sim/ray_scene.hpp"

namespace tumbletrace {
namespace {

// A right-handed orthonormal frame whose third column is the unit vector `axis`.
Eigen::Matrix3d FrameAbout(const Eigen::Vector3d& axis) {
  Eigen::Matrix3d axes;
  axes.col(2) = axis;
  axes.col(0) = axis.unitOrthogonal();
  axes.col(1) = axis.cross(axes.col(0));
  return axes;
}

}  // namespace

bool PartSolid(const Part& part, const Eigen::Matrix3d& camera_from_body,
               const Eigen::Vector3d& body_origin_camera_m, RayPrimitive* solid) {
  const auto to_camera = [&](const Eigen::Vector3d& at_body_m) -> Eigen::Vector3d {
    return body_origin_camera_m + camera_from_body * at_body_m;
  };
  switch (part.shape) {
    case PartShape::kCylinder: {
      const Eigen::Vector3d axis_body = part.axis_body.normalized();
      solid->shape = RayShape::kCylinder;
      solid->center_camera_m = to_camera(part.from_body_m + 0.5 * part.length_m * axis_body);
      solid->axes_camera = FrameAbout(camera_from_body * axis_body);
      solid->half_size_m = {0.5 * part.diameter_m, 0.5 * part.diameter_m, 0.5 * part.length_m};
      return true;
    }
    case PartShape::kBox:
      solid->shape = RayShape::kBox;
      solid->center_camera_m = to_camera(part.center_body_m);
      solid->axes_camera = camera_from_body;  // edges along the body's axes
      solid->half_size_m = 0.5 * part.size_m;
      return true;
    case PartShape::kSphere:
      solid->shape = RayShape::kSphere;
      solid->center_camera_m = to_camera(part.center_body_m);
      solid->half_size_m = {0.5 * part.diameter_m, 0.5 * part.diameter_m, 0.0};
      return true;
    case PartShape::kPointMass:
      return false;
  }
  return false;
}

RayPrimitive MarkerSolid(const Marker& marker, const Eigen::Matrix3d& camera_from_body,
                         const Eigen::Vector3d& body_origin_camera_m) {
  RayPrimitive solid;
  solid.center_camera_m = body_origin_camera_m + camera_from_body * marker.at_body_m;
  solid.half_size_m = {0.5 * marker.diameter_m, 0.5 * marker.diameter_m, 0.0};
  if (marker.normal_body) {
    solid.shape = RayShape::kDisc;
    solid.axes_camera = FrameAbout(camera_from_body * marker.normal_body->normalized());
  } else {
    solid.shape = RayShape::kSphere;
  }
  return solid;
}

RayScene BodyRayScene(const Body& body, const Eigen::Vector3d& cm_body_m, const RigidState& state,
                      const RigidTransform& camera_from_world, MarkerMaterial marker_kind,
                      const Eigen::Vector3d& towards_light_world, const std::vector<bool>& left_out) {
  // x_camera = R_cw (cm_world + R_wb (x_body - cm_body)) + t_cw
  const Eigen::Matrix3d camera_from_body =
      camera_from_world.rotation * state.world_from_body.toRotationMatrix();
  const Eigen::Vector3d body_origin_camera_m =
      camera_from_world.Apply(state.cm_world_m) - camera_from_body * cm_body_m;
  RayScene scene;
  scene.towards_light_camera = (camera_from_world.rotation * towards_light_world).normalized();
  for (const Part& part : body.parts) {
    SceneSolid solid;
    if (!PartSolid(part, camera_from_body, body_origin_camera_m, &solid.primitive)) continue;
    solid.surface = SurfaceKind::kBody;
    scene.solids.push_back(solid);
  }
  const SurfaceKind marker_surface = MarkerSurface(marker_kind);
  for (int i = 0; i < static_cast<int>(body.markers.size()); ++i) {
    if (i < static_cast<int>(left_out.size()) && left_out[i]) continue;
    SceneSolid solid;
    solid.primitive = MarkerSolid(body.markers[i], camera_from_body, body_origin_camera_m);
    solid.surface = marker_surface;
    solid.marker = i;
    scene.solids.push_back(solid);
  }
  return scene;
}

int MarkerSolidIndex(const RayScene& scene, int marker_index) {
  for (int i = 0; i < static_cast<int>(scene.solids.size()); ++i) {
    if (scene.solids[i].marker == marker_index) return i;
  }
  return -1;
}

}  // namespace tumbletrace
