// Simulated views of a planar calibration target: a camera of known intrinsics, board poses
// spread over the image at varied tilts (seeded), the exact projections of the target's
// features through the project's camera model, and rendered images of the printed pattern.
#pragma once

#include <Eigen/Geometry>
#include <cmath>
#include <random>
#include <vector>

#include "tumbletrace/calibrate/detect_target.hpp"
#include "tumbletrace/calibrate/target.hpp"
#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/sim/render_board.hpp"

namespace tumbletrace::testing {

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

// True when every corner of the target's sheet projects inside the image with `margin_px`,
// and lies within the undistorted field of view: beyond it the distortion polynomial turns
// over and folds far-off points back into the image.
inline bool SheetInImage(const CalibrationTarget& target, const CameraIntrinsics& k,
                         const RigidTransform& camera_from_board, double margin_px) {
  const Eigen::Vector4d b = target.SheetBounds();
  const double half_x = 0.5 * k.width_px / k.fx_px, half_y = 0.5 * k.height_px / k.fy_px;
  const double field_r2 = 1.2 * 1.2 * (half_x * half_x + half_y * half_y);
  for (const Eigen::Vector2d& corner : {Eigen::Vector2d(b[0], b[1]), Eigen::Vector2d(b[2], b[1]),
                                        Eigen::Vector2d(b[2], b[3]), Eigen::Vector2d(b[0], b[3])}) {
    const Eigen::Vector3d p = camera_from_board.Apply(Eigen::Vector3d(corner.x(), corner.y(), 0));
    if (!(p.z() > 0) || (p.head<2>() / p.z()).squaredNorm() > field_r2) return false;
    Eigen::Vector2d pixel;
    if (!ProjectBoardPoint(Eigen::Vector3d(corner.x(), corner.y(), 0), k, camera_from_board, &pixel)) {
      return false;
    }
    if (pixel.x() < margin_px || pixel.y() < margin_px || pixel.x() > k.width_px - 1 - margin_px ||
        pixel.y() > k.height_px - 1 - margin_px) {
      return false;
    }
  }
  return true;
}

// `count` board poses: the sheet's centre aimed at points spread over the middle `aim_span`
// of the image's width and height (a jittered 5 x 4 grid), tilted by `min_tilt_deg`..`max_tilt_deg` about an axis in the image plane
// that turns from view to view, turned about its normal by up to 20 degrees, and placed as
// close as the whole sheet stays inside the image. The board's printed face looks at the
// camera (board z along the optical axis before tilting). A wide span (0.7) gives small
// boards near the edges; a narrow one (0.3) boards that fill most of the frame, which pin
// the principal point about twice as well (docs/method.md, "Calibration").
inline std::vector<RigidTransform> BoardPoses(const CalibrationTarget& target,
                                              const CameraIntrinsics& k, int count,
                                              double min_tilt_deg, double max_tilt_deg,
                                              std::uint64_t seed, double aim_span = 0.7) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const Eigen::Vector4d b = target.SheetBounds();
  const Eigen::Vector3d centre_board(0.5 * (b[0] + b[2]), 0.5 * (b[1] + b[3]), 0.0);
  std::vector<RigidTransform> poses;
  for (int i = 0; i < count; ++i) {
    const double tilt = (min_tilt_deg + (max_tilt_deg - min_tilt_deg) * unit(rng)) * M_PI / 180;
    const double axis_angle = 2 * M_PI * (0.618034 * i + 0.1 * unit(rng));
    const double roll = (40 * unit(rng) - 20) * M_PI / 180;
    const Eigen::Matrix3d rotation =
        (Eigen::AngleAxisd(tilt, Eigen::Vector3d(std::cos(axis_angle), std::sin(axis_angle), 0)) *
         Eigen::AngleAxisd(roll, Eigen::Vector3d::UnitZ()))
            .toRotationMatrix();
    // Aim at a point of a 5 x 4 grid over the image (jittered), as near as fits.
    const double aim_from = 0.5 - 0.5 * aim_span;
    double u = (aim_from + aim_span * ((i % 5) + 0.5 * unit(rng)) / 5.0) * k.width_px;
    double v = (aim_from + aim_span * (((i / 5) % 4) + 0.5 * unit(rng)) / 4.0) * k.height_px;
    if (i % 4 == 0 && aim_span < 0.7) {  // every fourth view in a corner of the image, in turn
      const int corner = (i / 4) % 4;
      u = (corner % 2 == 0 ? 0.22 : 0.78) * k.width_px;
      v = (corner / 2 == 0 ? 0.22 : 0.78) * k.height_px;
    }
    const Eigen::Vector3d ray((u - k.cx_px) / k.fx_px, (v - k.cy_px) / k.fy_px, 1.0);
    RigidTransform pose;
    pose.rotation = rotation;
    for (double distance = 0.35; distance < 5.0; distance *= 1.02) {
      pose.translation_m = distance * ray.normalized() - rotation * centre_board;
      if (SheetInImage(target, k, pose, 8.0)) break;
    }
    poses.push_back(pose);
  }
  return poses;
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
