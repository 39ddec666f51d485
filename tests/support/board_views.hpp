// Simulated views of a planar calibration target: a camera of known intrinsics, board poses
// from the simulator (sim/board_poses.hpp), the exact projections of the target's
// features through the project's camera model, and rendered images of the printed pattern.
#pragma once

#include <Eigen/Geometry>
#include <cmath>
#include <random>
#include <vector>

#include "tumbletrace/calibrate/detect_target.hpp"
#include "tumbletrace/calibrate/target.hpp"
#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/sim/board_poses.hpp"
#include "tumbletrace/sim/render_board.hpp"

namespace tumbletrace::testing {

using tumbletrace::BoardPoses;
using tumbletrace::SheetInImage;

// The camera the views are taken with (invented values): a 1024 x 768 sensor, a lens of
// moderate barrel distortion, the principal point off the centre.
inline CameraIntrinsics CalibrationTruth() {
  CameraIntrinsics k;
  k.width_px = 1024;
  k.height_px = 768;
  k.fx_px = 1402.0;
  k.fy_px = 1398.0;
  k.cx_px = 520.3;
  k.cy_px = 377.8;
  k.distortion = {-0.12, 0.05, 3e-4, -2e-4, 0.0};
  return k;
}

inline CalibrationTarget Checkerboard9x6() {
  CalibrationTarget t;
  t.kind = TargetKind::kCheckerboard;
  t.columns = 9;
  t.rows = 6;
  t.pitch_m = 0.030;
  return t;
}

// A checkerboard of 20 x 14 inner corners at 15 mm (21 x 15 squares, 315 x 225 mm: an A3
// sheet), the board of the calibration figures.
inline CalibrationTarget Checkerboard20x14() {
  CalibrationTarget t = Checkerboard9x6();
  t.columns = 20;
  t.rows = 14;
  t.pitch_m = 0.015;
  return t;
}

inline CalibrationTarget Charuco(int columns, int rows, double square_m, double marker_m) {
  CalibrationTarget t;
  t.kind = TargetKind::kCharuco;
  t.columns = columns;
  t.rows = rows;
  t.pitch_m = square_m;
  t.marker_m = marker_m;
  t.dictionary = "DICT_5X5_100";
  return t;
}

// The exact pixels of every feature, plus Gaussian noise of `sigma_px` per coordinate.
inline TargetView ExactView(const CalibrationTarget& target, const CameraIntrinsics& k,
                            const RigidTransform& camera_from_board, double sigma_px,
                            std::mt19937_64* rng, const std::string& name) {
  std::normal_distribution<double> noise(0.0, sigma_px);
  TargetView view;
  view.name = name;
  view.image_size = cv::Size(k.width_px, k.height_px);
  const std::vector<Eigen::Vector3d> features = target.FeaturePoints();
  for (size_t id = 0; id < features.size(); ++id) {
    Eigen::Vector2d pixel;
    if (!ProjectBoardPoint(features[id], k, camera_from_board, &pixel)) continue;
    view.ids.push_back(static_cast<int>(id));
    view.pixels.push_back(pixel + Eigen::Vector2d(noise(*rng), noise(*rng)));
  }
  return view;
}

}  // namespace tumbletrace::testing
