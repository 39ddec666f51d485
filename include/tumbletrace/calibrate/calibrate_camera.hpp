// Intrinsics and Brown-Conrady distortion from views of a planar target, by Zhang's method
// (Z. Zhang, "A flexible new technique for camera calibration", IEEE TPAMI 22(11) (2000)
// 1330-1334): a closed-form start from the homographies of the views, then the maximum-
// likelihood refinement of every intrinsic and every view's pose by Levenberg-Marquardt
// (OpenCV's cv::calibrateCamera, which implements it). With the checks that tell a user
// whether the views can carry the result: outlier views, coverage of the image, and the
// spread of the board's orientations.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/calibrate/coverage.hpp"
#include "tumbletrace/calibrate/detect_target.hpp"
#include "tumbletrace/calibrate/target.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

struct CalibrationOptions {
  bool estimate_k3 = false;          // the sixth-order radial term; held at 0 by default
  bool estimate_tangential = true;   // p1, p2
  // A view is an outlier when its rms exceeds both `outlier_factor` times the median of the
  // views' rms and `outlier_floor_px` (so that views all far below a pixel are kept).
  double outlier_factor = 3.0;
  double outlier_floor_px = 0.25;
  int min_views = 3;                 // Zhang (2000), sec. 3.1: three views for five intrinsics
  int recommended_views = 10;        // fewer: a warning
  int coverage_columns = 8;          // the coverage map's grid
  int coverage_rows = 6;
  double min_coverage_fraction = 0.6;  // of the cells touched; less: a warning
  // Weak tilt: every view within this angle of head-on, or every pair of board normals
  // within it of each other (parallel boards: Zhang 2000, sec. 3.2 and its degenerate
  // configurations), deg.
  double weak_tilt_deg = 15.0;
  double weak_relative_sigma_focal = 0.01;  // 1-sigma of fx or fy above 1 %: weak
  double warn_sigma_principal_px = 1.0;     // 1-sigma of cx or cy above: a warning

  std::string Validate() const;  // empty when valid
};

struct CalibrationView {
  std::string name;
  int points = 0;
  double rms_px = 0.0;     // per coordinate, with the final intrinsics (the view's own pose)
  bool outlier = false;    // left out of the final calibration
  double tilt_deg = 0.0;   // angle between the board's normal and the optical axis
  RigidTransform camera_from_target;
};

struct CameraCalibration {
  CameraIntrinsics intrinsics;
  // 1-sigma of fx, fy, cx, cy (px) and of k1 k2 p1 p2 k3; a term held fixed is null.
  std::array<double, 4> sigma_fx_fy_cx_cy_px = {0, 0, 0, 0};
  std::array<std::optional<double>, 5> sigma_distortion;
  double rms_px = 0.0;     // over the kept views' features, per coordinate
  int views_used = 0;
  std::vector<CalibrationView> views;
  std::string outlier_criterion;  // in words
  CoverageMap coverage;
  double max_tilt_deg = 0.0;
  double normal_spread_deg = 0.0;  // largest angle between two kept views' board normals
  bool weak = false;
  std::vector<std::string> weak_reasons;
  std::vector<std::string> warnings;
};

// Calibrates from the views (all of one image size). Throws DataError when fewer than
// options.min_views views remain (with the reason), InputError for bad options or views of
// different sizes.
CameraCalibration CalibrateCamera(const std::vector<TargetView>& views,
                                  const CalibrationTarget& target, const CalibrationOptions& options);

}  // namespace tumbletrace
