// Marker detection: bright dots (retro-reflective or painted) on a darker object, or dark
// dots on a light one. A local background estimate is removed, the residue thresholded,
// connected components measured, and each accepted blob's centre taken as the
// intensity-weighted centroid of its background-subtracted pixels.
#pragma once

#include <Eigen/Core>
#include <opencv2/core.hpp>
#include <optional>
#include <string>
#include <vector>

namespace tumbletrace {

struct Detection {
  Eigen::Vector2d center_px = Eigen::Vector2d::Zero();  // origin at the centre of the top-left pixel
  double area_px = 0.0;           // pixels above the threshold
  double signal = 0.0;            // summed background-subtracted intensity, grey levels
  double peak = 0.0;              // largest background-subtracted value, grey levels
  double elongation = 1.0;        // ratio of the blob's principal standard deviations, >= 1
  double quality = 0.0;           // 0..1: signal-to-noise and roundness
};

struct DetectorOptions {
  bool dark_dots = false;             // dark dots on a light object instead of bright on dark
  std::optional<double> threshold;    // above the local background, grey levels of the
                                      // input depth; default: `threshold_sigma` x the noise
  double threshold_sigma = 6.0;       // automatic threshold in units of the image noise
  double min_area_px = 3.0;           // blobs smaller or larger are rejected
  double max_area_px = 2000.0;
  double max_elongation = 4.0;        // rejects streaks and edges (motion blur stretches dots)
  int background_radius_px = 7;       // the background is a grey opening (closing for dark
                                      // dots) with a disc of this radius: wider than a dot

  std::string Validate() const;       // empty when valid
};

class MarkerDetector {
 public:
  explicit MarkerDetector(const DetectorOptions& options);

  // Detects in the given regions (clipped to the image), or in the whole frame when
  // `regions` is empty. Detections of overlapping regions are merged. Accepts CV_8U and
  // CV_16U single-channel images.
  std::vector<Detection> Detect(const cv::Mat& image, const std::vector<cv::Rect>& regions = {});

  // The noise level (grey levels) used by the automatic threshold, estimated from the
  // first full-frame call and refreshed on later ones.
  double noise_sigma() const { return noise_sigma_; }

 private:
  DetectorOptions options_;
  double noise_sigma_ = -1.0;
};

}  // namespace tumbletrace
