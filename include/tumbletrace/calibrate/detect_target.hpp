// Finding a calibration target in an image: the features (checkerboard corners, circle
// centres or ChArUco corners) with their ids and sub-pixel positions.
#pragma once

#include <Eigen/Core>
#include <opencv2/core.hpp>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/calibrate/target.hpp"

namespace tumbletrace {

// One image in which the target was found.
struct TargetView {
  std::string name;                   // the image's file name, or "frame N" of a clip
  cv::Size image_size;
  std::vector<int> ids;               // index into CalibrationTarget::FeaturePoints()
  std::vector<Eigen::Vector2d> pixels;  // origin at the centre of the top-left pixel
};

// Finds the target in an 8-bit (or 16-bit, scaled) grey image:
// - checkerboard: cv::findChessboardCorners, refined by cv::cornerSubPix in a window of
//   about a third of the corner spacing;
// - circle grid: cv::findCirclesGrid (symmetric grid of dark circles on white);
// - charuco: cv::aruco::detectMarkers, then cv::aruco::interpolateCornersCharuco (local
//   homographies and sub-pixel refinement); a partial view is kept with at least
//   `min_charuco_corners` corners.
// Returns nullopt when the target is not found (the whole grid, for the first two kinds).
std::optional<TargetView> DetectTarget(const cv::Mat& image, const CalibrationTarget& target,
                                       const std::string& name, int min_charuco_corners = 8);

}  // namespace tumbletrace
