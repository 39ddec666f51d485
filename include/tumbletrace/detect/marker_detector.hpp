// Marker detection: bright dots or spheres (retro-reflective or painted) on a darker object,
// or dark dots on a light one. A local background estimate is removed, the residue
// thresholded and connected components measured. A blob must rise above all of its
// surroundings: the corners of the body's silhouette, which the opening also cuts off, do
// not.
//
// The centre. Of a blob of `min_outline_radius_px` or more (the radius of the uniform disc
// of the same second moments) and elongation up to `max_outline_elongation` (weighted by the
// residue, or, 0.5 px larger, by its thresholded pixels alone; or of outline size and
// lopsided, as a lit crescent is: docs/method.md), the centre of its outline (CentreMethod::kOutline): sub-pixel points where the residue falls fastest
// along 64 rays from the centroid, and a robust fit of a circle (and, when the points go
// round the blob, an ellipse) to them, weighted by the edge's steepness, outliers trimmed.
// The brightness inside (the shading of a sphere lit from one side, a specular highlight)
// does not enter, where it pulls an intensity-weighted centroid towards the light. The
// outline of a sphere of radius R at distance Z, seen at angle a off the optical axis of a
// pinhole camera of focal length f (px), is an ellipse whose centre lies farther out than
// the projected centre by
//   e = f sin 2a / (cos 2a + cos 2b) - f tan a  ~=  d b^2 / cos^2 a,   sin b = R / Z,
// d = f tan a the distance from the principal point (the tangent cone's rim meets the image
// plane at f tan(a -+ b); from memory): with the outline's radius r ~= f b, e ~= d (r / f)^2
// / cos^2 a, 0.0035 px for r = 3 px and 0.025 px for r = 8 px at d = 640 px, f = 1400 px
// (a 1024 x 768 frame's corner). A tilted flat disc's is of the same order. Smaller blobs
// (and CentreMethod::kCentroid) take the intensity-weighted centroid of their
// background-subtracted pixels, less a pedestal of a tenth of the peak: an outline of a few
// pixels cannot be fitted, and a flat dot's centroid is unbiased.
//
// Completeness. A fitted outline carries measures of how much of a whole marker the blob is
// (the share of rays with outline points, the share of the outline's inside that the blob
// fills, its symmetry about the centre) and their minimum, `completeness`. A blob cut by the
// body's outline or lying half in shadow fills only part of the disc its visible outline
// predicts; below `min_completeness` it is dropped, and below 1 its `sigma_px` grows with
// the missing share.
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
  double quality = 0.0;           // 0..1: signal-to-noise, roundness and completeness
  double radius_px = 0.0;         // the fitted outline's equal-area radius; without an outline
                                  // fit, sqrt(area_px / pi)
  bool outline_fitted = false;    // the centre is the outline's (else the centroid)
  double outline_rms_px = 0.0;    // rms distance of the outline points from the fit (0: none)
  double coverage = 1.0;          // share of rays with an outline point (1: not measured)
  double fill = 1.0;              // share of the outline's inside in the blob (1: not measured)
  double symmetry = 1.0;          // share of the blob mirrored onto itself (1: not measured)
  double completeness = 1.0;      // min(coverage, fill, symmetry); 1 when not measured
  double sigma_px = 0.0;          // 1-sigma of the centre (each axis), px
};

enum class CentreMethod {
  kOutline,   // the centre of the fitted outline (blobs large enough; else the centroid)
  kCentroid,  // the intensity-weighted centroid less a pedestal, for every blob
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
  CentreMethod centre = CentreMethod::kOutline;  // how a blob's centre is found
  double min_outline_radius_px = 3.0;  // smaller blobs (radius of the disc of equal second
                                      // moments) take the centroid
  double max_outline_elongation = 2.0;  // longer blobs (motion streaks) take the centroid, their
                                      // exposure's mean position
  double min_completeness = 0.6;      // fitted blobs less complete than this are dropped
  double incomplete_bias_of_radius = 0.25;  // sigma_px grows by this x (1 - completeness) x r
  bool separate_from_bands = true;    // a refused blob is looked at again with the thin bands
                                      // of the body (lit edges, highlights) taken into the
                                      // background, which frees a marker joined to one

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
  // Measures one blob (pixel coordinates of `work`) and adds its detection to `out` when
  // it is accepted. False when it is refused for what a marker joined to a band of the body
  // would show (too long, too large, cut by the examined area's edge, not rising above its
  // surroundings, an incomplete outline); true when accepted or refused for another reason.
  bool MeasureBlob(const cv::Mat& roi, const cv::Mat& residue, const cv::Rect& core,
                   const cv::Rect& work, double threshold, const std::vector<cv::Point>& blob,
                   std::vector<Detection>* out);
  // Measures again the parts of a refused blob that rise above the body's thin bands
  // (marker_detector.cpp). `residue` is changed around the blob and restored.
  void SeparateFromBands(const cv::Mat& roi, cv::Mat* residue, const cv::Rect& core,
                         const cv::Rect& work, double threshold, const std::vector<cv::Point>& blob,
                         std::vector<Detection>* out);

  DetectorOptions options_;
  double noise_sigma_ = -1.0;
  std::vector<int> disc_half_width_px_;  // the background filter's disc, row by row
  std::vector<cv::Mat> line_kernels_;    // segments of the disc's diameter (SeparateFromBands)
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
    cv::Mat gradient_x;  // the residue's gradient around a blob (outline fit)
    cv::Mat gradient_y;
  };
  WorkSpace work_;
};

// The local background the detector removes: the grey opening (closing when `dark_dots`)
// of a CV_8U or CV_16U image with the elliptical disc of radius `radius_px`
// (cv::getStructuringElement(MORPH_ELLIPSE)), pixels outside the image ignored; the values
// of cv::morphologyEx, computed faster. Same size and type as `image`.
cv::Mat DetectionBackground(const cv::Mat& image, int radius_px, bool dark_dots);

}  // namespace tumbletrace
