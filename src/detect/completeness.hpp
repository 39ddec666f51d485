// Whether a blob is a whole marker: measures of its completeness against its fitted outline.
//
// A marker cut by the body's outline or half in shadow keeps part of its outline, and the
// fit to that part predicts the whole disc; the blob then fills only part of the predicted
// disc, is lopsided about the predicted centre, and has outline points on few of the rays.
// A glint or two merged dots fit no outline well. The measures:
//   coverage  the share of rays with an inlier outline point (Outline::coverage);
//   fill      the share of the pixels well inside the outline (pixel centres at least 1 px
//             inside it) that belong to the blob;
//   symmetry  the share of the blob's pixels whose mirror image through the centre
//             (rounded to the nearest pixel) belongs to the blob too;
//   score     the smallest of the three: 1 for a whole disc, about the visible share for a
//             cut one.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "outline_fit.hpp"

namespace tumbletrace::detect_internal {

// The blob's pixels on a grid: `marks` row by row over the box at (x0, y0), `width` wide; a
// pixel of the blob holds `blob_mark`.
struct BlobMarks {
  const std::vector<unsigned char>* marks = nullptr;
  int x0 = 0;
  int y0 = 0;
  int width = 0;
  int height = 0;
  unsigned char blob_mark = 0;

  bool InBlob(int x, int y) const;  // (x, y) in the outline's coordinates
};

struct CompletenessMeasures {
  double coverage = 0.0;  // share of rays with an inlier outline point
  double fill = 0.0;      // share of the pixels inside the outline that are the blob's
  double symmetry = 0.0;  // share of the blob's pixels mirrored onto the blob
  double score = 0.0;     // min(coverage, fill, symmetry)
};

CompletenessMeasures MeasureCompleteness(const Outline& outline, const BlobMarks& blob);

// Share of the blob's pixels p whose mirror image 2c - p (nearest pixel) is in the blob: 1
// for a disc or a motion streak about their centre, about 0.6 for a lit crescent.
double Symmetry(const Eigen::Vector2d& center_px, const BlobMarks& blob);

// The centre's 1-sigma (px) of a fitted outline: the root of the largest eigenvalue of the
// fit's covariance, with the bias of an incomplete outline added in quadrature,
//   sigma = sqrt(sigma_fit^2 + (k (1 - score) r)^2),
// k = `incomplete_bias_of_radius`, measured on rendered shaded spheres (the detector's tests).
double CenterSigmaPx(const Outline& outline, double score, double incomplete_bias_of_radius);

}  // namespace tumbletrace::detect_internal
