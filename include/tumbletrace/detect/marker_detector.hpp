// Marker detection: bright dots (retro-reflective or painted) on a darker object, or dark
// dots on a light one. A local background estimate is removed, the residue thresholded,
// connected components measured, and each accepted blob's centre taken as the
// intensity-weighted centroid of its background-subtracted pixels, less a pedestal of a
// tenth of its peak. A blob must rise above all of its surroundings: the corners of the
// body's silhouette, which the opening also cuts off, do not.
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
  double min_noise_sigma_levels = 2.0;  // floor of the noise estimate, grey levels of the
                                      // input depth: lossy video (H.264) has no noise left
                                      // in flat areas but artifacts of this order at edges
  double min_area_px = 3.0;           // blobs smaller or larger are rejected
  double max_area_px = 2000.0;
  double max_elongation = 4.0;        // rejects streaks and edges (motion blur stretches dots)
  int background_radius_px = 4;       // the background is a grey opening (closing for dark
                                      // dots) with a disc of this radius: wider than a dot
                                      // (diameter up to 2r), narrower than the body's parts
                                      // (width above 2r + 1), whose residue would swallow
                                      // the dots on them

  std::string Validate() const;       // empty when valid
};

class MarkerDetector {
 public:
  explicit MarkerDetector(const DetectorOptions& options);

  // Detects in the given regions (clipped to the image), or in the whole frame when
  // `regions` is empty. Detections of overlapping regions are merged. Accepts CV_8U and
  // CV_16U single-channel images.
  std::vector<Detection> Detect(const cv::Mat& image, const std::vector<cv::Rect>& regions = {});

  // The noise level (grey levels of the input depth) used by the automatic threshold and
  // the quality, estimated from the whole image on the first call (of either kind) and
  // refreshed on every full-frame call; negative before the first call.
  double noise_sigma() const { return noise_sigma_; }

 private:
  // Detects in `core` (a non-empty part of the image), looking at `work` (core and margin).
  void DetectIn(const cv::Mat& image, const cv::Rect& core, const cv::Rect& work,
                double threshold, std::vector<Detection>* out);

  DetectorOptions options_;
  double noise_sigma_ = -1.0;
  std::vector<int> disc_half_width_px_;  // the background filter's disc, row by row
  // Work space kept across calls (full frames and regions use its top-left part), so that
  // a frame allocates no image-sized buffers. A copy of the detector starts with its own,
  // empty work space (cv::Mat copies would share the pixels).
  struct WorkSpace {
    WorkSpace() = default;
    WorkSpace(const WorkSpace&) {}
    WorkSpace& operator=(const WorkSpace&) { return *this; }
    cv::Mat intermediate;  // the erosion of the opening (dilation of the closing)
    cv::Mat background;
    cv::Mat residue;
    cv::Mat mask;
    std::vector<unsigned char> filter_rows;
    std::vector<cv::Point> seeds;
    std::vector<cv::Point> blob;
    std::vector<unsigned char> near_blob;
    std::vector<float> noise_samples;
  };
  WorkSpace work_;
};

// The local background the detector removes: the grey opening (closing when `dark_dots`)
// of a CV_8U or CV_16U image with the elliptical disc of radius `radius_px`
// (cv::getStructuringElement(MORPH_ELLIPSE)), pixels outside the image ignored; the values
// of cv::morphologyEx, computed faster. Same size and type as `image`.
cv::Mat DetectionBackground(const cv::Mat& image, int radius_px, bool dark_dots);

}  // namespace tumbletrace
