#include "tumbletrace/sim/render_board.hpp"

namespace tumbletrace {

bool ProjectBoardPoint(const Eigen::Vector3d& point_board_m, const CameraIntrinsics& intrinsics,
                       const RigidTransform& camera_from_board, Eigen::Vector2d* pixel) {
  const Eigen::Vector3d p = camera_from_board.Apply(point_board_m);
  return ProjectCameraPoint(intrinsics, p.data(), pixel->data());
}

cv::Mat RenderBoardImage(const std::vector<std::vector<Eigen::Vector2d>>& polygons_board_m,
                         const CameraIntrinsics& intrinsics, const RigidTransform& camera_from_board,
                         const BoardImageSettings& settings) {
  SceneInstant scene;
  for (const std::vector<Eigen::Vector2d>& polygon : polygons_board_m) {
    // Many-sided polygons (circles) are already fine; straight edges are cut into pieces.
    const int pieces = polygon.size() > 8 ? 1 : settings.edge_pieces;
    std::vector<Eigen::Vector2d> projected;
    bool in_front = true;
    for (size_t i = 0; i < polygon.size() && in_front; ++i) {
      const Eigen::Vector2d& a = polygon[i];
      const Eigen::Vector2d& b = polygon[(i + 1) % polygon.size()];
      for (int k = 0; k < pieces; ++k) {
        const Eigen::Vector2d q = a + (b - a) * (static_cast<double>(k) / pieces);
        Eigen::Vector2d pixel;
        in_front = ProjectBoardPoint(Eigen::Vector3d(q.x(), q.y(), 0.0), intrinsics,
                                     camera_from_board, &pixel);
        if (!in_front) break;
        projected.push_back(pixel);
      }
    }
    if (in_front) scene.silhouette_polygons_px.push_back(std::move(projected));
  }
  RenderSettings render;
  render.width_px = intrinsics.width_px;
  render.height_px = intrinsics.height_px;
  render.background_level = settings.white_level;
  render.background_gradient = 0.0;
  render.body_level = settings.black_level;
  render.supersampling = settings.supersampling;
  render.noise_sigma_levels = settings.noise_sigma_levels;
  render.noise_seed = settings.noise_seed;
  return RenderFrame({scene}, render);
}

}  // namespace tumbletrace
