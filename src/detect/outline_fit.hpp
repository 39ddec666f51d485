// A robust fit of a circle or an ellipse to a blob's edge points.
//
// The outline of a sphere seen through a pinhole and that of a tilted flat disc are
// ellipses; the centre of the outline is taken as the marker's centre (the detector's
// header gives how far that is from the projected centre). The fit:
//   1. a first circle from triples of edge points spread around the blob (each point i with
//      the points a third and two thirds of the way round after it), keeping the one that
//      the most edge strength agrees with (within `consensus_px`);
//   2. weighted least squares (Gauss-Newton) of the circle to its inliers, the inliers
//      re-chosen from all points after each pass (|residual| below `trim_sigmas` robust
//      standard deviations, 1.4826 x the median absolute residual, and at least `min_trim_px`);
//   2b. the outer envelope: points inside the model are down-weighted (a terminator or a
//      cutting edge lies inside a marker's rim, never outside it) until the fit settles on
//      the outermost consistent arc (FitOuterEnvelope in outline_fit.cpp);
//   3. when the inliers go round at least `ellipse_min_coverage` of the azimuths, the same
//      for an ellipse started from the circle.
// Points are weighted by their fall per pixel (a stronger edge places its point better).
#pragma once

#include <Eigen/Core>
#include <optional>
#include <vector>

#include "edge_points.hpp"

namespace tumbletrace::detect_internal {

struct OutlineFitOptions {
  int rays = 64;                      // the edge search's rays (for the coverage)
  double consensus_px = 0.5;          // the first circle's agreement distance
  double trim_sigmas = 3.0;           // inliers: |residual| below this many robust sigmas
  double min_trim_px = 0.25;          // and never a tighter limit than this
  double ellipse_min_coverage = 0.8;  // share of rays with inliers that allows an ellipse
  int passes = 4;                     // trim-and-refit passes of each model
  double envelope_px = 0.15;          // points deeper inside than this are down-weighted (0: off)
  int envelope_passes = 12;           // reweighting passes of the outer envelope
};

struct Outline {
  Eigen::Vector2d center_px = Eigen::Vector2d::Zero();  // in the edge points' coordinates
  // (p - c)^T shape (p - c) = 1 on the outline; identity / r^2 for a circle of radius r.
  Eigen::Matrix2d shape_per_px2 = Eigen::Matrix2d::Identity();
  double radius_px = 0.0;             // of the circle of the same area, (det shape)^(-1/4)
  bool ellipse = false;               // an ellipse (else a circle) was fitted
  double rms_px = 0.0;                // weighted rms residual of the inliers
  double coverage = 0.0;              // share of the rays with an inlier point
  int inliers = 0;                    // number of inlier points
  Eigen::Matrix2d center_covariance_px2 = Eigen::Matrix2d::Zero();  // from the residuals
  std::vector<char> inlier;           // per edge point
};

// Empty when fewer than 6 points agree on an outline, or the fit fails.
std::optional<Outline> FitOutline(const std::vector<EdgePoint>& points,
                                  const OutlineFitOptions& options);

}  // namespace tumbletrace::detect_internal
