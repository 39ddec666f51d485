// Synthetic images of a printed planar pattern (a calibration target) seen by a camera:
// black polygons on a white sheet, projected through the pinhole with Brown-Conrady
// distortion (model/camera.hpp) and painted anti-aliased by the frame renderer (render.hpp).
//
// Each polygon edge is cut into short pieces before projection, so that the curved image
// of a straight edge under distortion is followed to well under 0.01 px; the white sheet
// fills the whole image (the background level), the black areas are the renderer's
// silhouettes.
#pragma once

#include <Eigen/Core>
#include <opencv2/core.hpp>
#include <vector>

#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/sim/render.hpp"

namespace tumbletrace {

struct BoardImageSettings {
  double white_level = 210.0;       // the sheet, grey levels
  double black_level = 25.0;        // the printed areas
  double noise_sigma_levels = 1.0;  // sensor noise
  int supersampling = 4;            // per axis
  int edge_pieces = 16;             // pieces per polygon edge (straight edges only)
  std::uint64_t noise_seed = 1;
};

// `polygons_board_m`: the black areas, (x, y) in the board plane z = 0, metres.
// `camera_from_board`: x_camera = R x_board + t. Polygons with a vertex behind the camera
// are left out.
cv::Mat RenderBoardImage(const std::vector<std::vector<Eigen::Vector2d>>& polygons_board_m,
                         const CameraIntrinsics& intrinsics, const RigidTransform& camera_from_board,
                         const BoardImageSettings& settings);

// The pixel of a point of the board (x, y, 0) in the same model; false when behind.
bool ProjectBoardPoint(const Eigen::Vector3d& point_board_m, const CameraIntrinsics& intrinsics,
                       const RigidTransform& camera_from_board, Eigen::Vector2d* pixel);

}  // namespace tumbletrace
