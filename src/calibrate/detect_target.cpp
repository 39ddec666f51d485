#include "tumbletrace/calibrate/detect_target.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <opencv2/calib3d.hpp>
#include <opencv2/features2d.hpp>
#include <opencv2/imgproc.hpp>

#include "charuco_board.hpp"

namespace tumbletrace {
namespace {

cv::Mat ToGrey8(const cv::Mat& image) {
  cv::Mat grey = image;
  if (image.channels() == 3) cv::cvtColor(image, grey, cv::COLOR_BGR2GRAY);
  if (grey.depth() == CV_16U) {
    double high = 0.0;
    cv::minMaxLoc(grey, nullptr, &high);
    grey.convertTo(grey, CV_8U, high > 0 ? 255.0 / high : 1.0);
  }
  return grey;
}

// Smallest distance between neighbouring features of a grid found row-major, px.
double SmallestSpacing(const std::vector<cv::Point2f>& points, int columns) {
  double smallest = std::numeric_limits<double>::infinity();
  for (size_t i = 0; i + 1 < points.size(); ++i) {
    if ((i + 1) % columns != 0) smallest = std::min<double>(smallest, cv::norm(points[i + 1] - points[i]));
    if (i + columns < points.size()) smallest = std::min<double>(smallest, cv::norm(points[i + columns] - points[i]));
  }
  return smallest;
}

TargetView MakeView(const std::string& name, cv::Size size, const std::vector<cv::Point2f>& points,
                    const std::vector<int>& ids) {
  TargetView view;
  view.name = name;
  view.image_size = size;
  view.ids = ids;
  for (const cv::Point2f& p : points) view.pixels.emplace_back(p.x, p.y);
  return view;
}

std::vector<int> Sequence(size_t n) {
  std::vector<int> ids(n);
  for (size_t i = 0; i < n; ++i) ids[i] = static_cast<int>(i);
  return ids;
}

}  // namespace

std::optional<TargetView> DetectTarget(const cv::Mat& image, const CalibrationTarget& target,
                                       const std::string& name, int min_charuco_corners) {
  const cv::Mat grey = ToGrey8(image);
  const cv::Size pattern(target.columns, target.rows);
  std::vector<cv::Point2f> points;
  switch (target.kind) {
    case TargetKind::kCheckerboard: {
      if (!cv::findChessboardCorners(grey, pattern, points,
                                     cv::CALIB_CB_ADAPTIVE_THRESH | cv::CALIB_CB_NORMALIZE_IMAGE)) {
        return std::nullopt;
      }
      // The search window (half-size) stays inside the squares around each corner.
      const int half = std::clamp(static_cast<int>(SmallestSpacing(points, target.columns) / 3), 2, 15);
      cv::cornerSubPix(grey, points, cv::Size(half, half), cv::Size(-1, -1),
                       cv::TermCriteria(cv::TermCriteria::EPS + cv::TermCriteria::COUNT, 100, 1e-4));
      return MakeView(name, grey.size(), points, Sequence(points.size()));
    }
    case TargetKind::kCircleGrid: {
      cv::SimpleBlobDetector::Params params;
      params.minArea = 8;
      params.maxArea = 0.05f * grey.total();
      params.filterByConvexity = false;
      params.filterByInertia = true;
      params.minInertiaRatio = 0.05f;  // circles seen obliquely are ellipses
      const cv::Ptr<cv::FeatureDetector> blobs = cv::SimpleBlobDetector::create(params);
      if (!cv::findCirclesGrid(grey, pattern, points, cv::CALIB_CB_SYMMETRIC_GRID, blobs)) {
        return std::nullopt;
      }
      return MakeView(name, grey.size(), points, Sequence(points.size()));
    }
    case TargetKind::kCharuco: {
      const cv::Ptr<cv::aruco::CharucoBoard> board = MakeCharucoBoard(target);
      std::vector<std::vector<cv::Point2f>> marker_corners;
      std::vector<int> marker_ids;
      cv::aruco::detectMarkers(grey, board->dictionary, marker_corners, marker_ids);
      if (marker_ids.size() < 2) return std::nullopt;
      std::vector<int> ids;
      cv::aruco::interpolateCornersCharuco(marker_corners, marker_ids, grey, board, points, ids);
      if (static_cast<int>(ids.size()) < min_charuco_corners) return std::nullopt;
      // A second sub-pixel pass in a window that stays clear of the markers: their corners
      // lie (square - marker) / 2 from the chessboard corners along each axis.
      double spacing = std::numeric_limits<double>::infinity();
      for (size_t i = 0; i < marker_corners.size(); ++i) {
        for (int c = 0; c < 4; ++c) {
          spacing = std::min<double>(spacing, cv::norm(marker_corners[i][c] - marker_corners[i][(c + 1) % 4]));
        }
      }
      const double clearance = 0.5 * (target.pitch_m - target.marker_m) / target.marker_m * spacing;
      const int half = std::clamp(static_cast<int>(0.8 * clearance), 2, 10);
      cv::cornerSubPix(grey, points, cv::Size(half, half), cv::Size(-1, -1),
                       cv::TermCriteria(cv::TermCriteria::EPS + cv::TermCriteria::COUNT, 100, 1e-4));
      return MakeView(name, grey.size(), points, ids);
    }
  }
  return std::nullopt;
}

}  // namespace tumbletrace
