// Marker detection (include/tumbletrace/detect/marker_detector.hpp).
//
// Per region (or the whole frame):
//   1. background B: grey opening of the image I with a disc wider than a dot (closing for
//      dark dots), which removes the dots and keeps the body and the illumination;
//   2. residue R = max(0, I - B) (B - I for dark dots), in float at the input's depth;
//   3. pixels with R > threshold, grouped into 8-connected components;
//   4. per component of accepted area that rises above its surroundings (the pixels two
//      and three away) by the threshold: over the component grown by one pixel (to take in
//      the anti-aliased rim), the centroid and second moments weighted by R less a
//      pedestal of 10 % of the peak;
//   5. kept when round enough;
//   6. a blob of 3 px radius or more and elongation up to 2: the centre of its outline
//      (edge_points, outline_fit) and its completeness (completeness), dropped when clearly
//      incomplete.
//
// Speed, on one core of a shared 2-core test machine (before the outline fit, which adds
// about 65 us of CPU per fitted blob: bench/detect_bench): a 1024 x 768 8-bit frame 2-4 ms
// (16 bits: 3-5 ms), eight regions of 30 x 30 px 0.2-0.3 ms, against about 1.5 ms to decode
// the frame from H.264. For that, two OpenCV calls
// that give the same results are replaced: cv::morphologyEx (about 50 us of fixed cost per
// call, most of a small region's time) by DiscFilter, and cv::connectedComponentsWithStats
// (7 ms for a full frame, as it accumulates statistics over every pixel) by a flood fill
// from the few pixels above the threshold (found eight at a time: cv::findNonZero looks at
// each).
#include "tumbletrace/detect/marker_detector.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <limits>
#include <numbers>
#include <opencv2/imgproc.hpp>
#include <stdexcept>

#include "completeness.hpp"
#include "edge_points.hpp"
#include "outline_fit.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

using detect_internal::BlobMarks;
using detect_internal::EdgePoint;
using detect_internal::Outline;

constexpr int kMaxBackgroundRadiusPx = 50;
// Centres closer than this are the same blob seen from two overlapping regions.
constexpr double kDuplicateDistancePx = 0.5;
// A blob's surroundings: the pixels 2..kRingPx away from it (Chebyshev distance).
constexpr int kRingPx = 3;
// The centroid's pedestal, as a fraction of the blob's peak residue (see DetectIn).
constexpr double kPedestalOfPeak = 0.1;
// Below this symmetry about its centroid, a blob that is not round is taken as a partial
// marker (a crescent, a cut disc) rather than a motion streak (symmetric: 0.98 for the tests' 20 px streak; lit crescents
// on the imaging study's clips 0.5-0.9).
constexpr double kLopsidedSymmetry = 0.9;
// A blob whose intensity-weighted centroid lies farther than this from its pixels' mean is
// lit from one side (a shaded sphere) and its centroid is not its centre.
constexpr double kLopsidedShiftPx = 0.25;

// The rows of cv::getStructuringElement(MORPH_ELLIPSE) for a disc of radius r: each row
// dy = -r..r is a run of pixels symmetric about the centre column, [-w, w] (w = -1: empty).
std::vector<int> DiscHalfWidths(int radius_px) {
  const int size = 2 * radius_px + 1;
  const cv::Mat kernel = cv::getStructuringElement(cv::MORPH_ELLIPSE, cv::Size(size, size));
  std::vector<int> half_width(size);
  for (int row = 0; row < size; ++row) {
    const int count = cv::countNonZero(kernel.row(row));
    const int w = count > 0 ? (count - 1) / 2 : -1;
    bool centred_run = count == 2 * w + 1 || count == 0;
    for (int dx = -w; dx <= w; ++dx) {
      centred_run &= kernel.at<std::uint8_t>(row, radius_px + dx) != 0;
    }
    if (!centred_run) {
      throw std::logic_error("marker detector: a row of the elliptical structuring element is "
                             "not a centred run");
    }
    half_width[row] = w;
  }
  return half_width;
}

// Directions of the line segments that take the body's bands into the background
// (SeparateFromBands): 15 deg apart, so a segment of radius r strays at most r sin 7.5 deg
// (0.8 px for r = 6) from a band's axis.
constexpr int kBandOrientations = 12;

// Structuring elements: digital segments of 2r + 1 pixels through the centre of a
// (2r + 1)^2 kernel, kBandOrientations directions over half a turn.
std::vector<cv::Mat> LineKernels(int radius_px) {
  std::vector<cv::Mat> kernels;
  const int size = 2 * radius_px + 1;
  for (int k = 0; k < kBandOrientations; ++k) {
    const double angle = std::numbers::pi * k / kBandOrientations;
    const int dx = static_cast<int>(std::lround(radius_px * std::cos(angle)));
    const int dy = static_cast<int>(std::lround(radius_px * std::sin(angle)));
    cv::Mat kernel = cv::Mat::zeros(size, size, CV_8U);
    cv::line(kernel, cv::Point(radius_px - dx, radius_px - dy), cv::Point(radius_px + dx, radius_px + dy),
             cv::Scalar(1), 1, cv::LINE_8);
    kernels.push_back(kernel);
  }
  return kernels;
}

// Grey erosion (kMin) or dilation of `src` into `dst` (same size and type) by the disc given
// as row half-widths, pixels outside `src` ignored (OpenCV's default morphology border). The
// disc is the union of its rows, so
//   out(x, y) = min over dy of H_w(dy)(x, y + dy),   H_w(x, y) = min of I over [x - w, x + w],
// and H_w = min(H_w-1 shifted left, H_w-1 shifted right) for w >= 2: about 3r comparisons
// per pixel instead of the (2r + 1)^2 pi / 4 of a direct disc filter. The runs of the last
// 2r + 1 rows are kept in `rows`, a ring buffer.
template <typename T, bool kMin>
void DiscFilter(const cv::Mat& src, const std::vector<int>& half_width, cv::Mat* dst,
                std::vector<unsigned char>* rows) {
  const int r = static_cast<int>(half_width.size() - 1) / 2;
  const int width = src.cols;
  const int height = src.rows;
  const int padded = width + 2 * r;
  const int levels = r + 1;
  const int ring_rows = 2 * r + 1;
  const T neutral = kMin ? std::numeric_limits<T>::max() : std::numeric_limits<T>::lowest();
  const auto op = [](T a, T b) { return kMin ? (b < a ? b : a) : (b > a ? b : a); };
  rows->resize(static_cast<std::size_t>(ring_rows) * levels * padded * sizeof(T));
  T* const ring = reinterpret_cast<T*>(rows->data());
  const auto runs = [&](int y, int w) {
    return ring + (static_cast<std::size_t>(y % ring_rows) * levels + w) * padded;
  };
  // Level w of row y holds H_w at padded index x + r, valid for x + r in [w, padded - w).
  const auto fill = [&](int y) {
    T* level0 = runs(y, 0);
    const T* in = src.ptr<T>(y);
    std::fill(level0, level0 + r, neutral);
    std::copy(in, in + width, level0 + r);
    std::fill(level0 + r + width, level0 + padded, neutral);
    if (r >= 1) {
      T* level1 = runs(y, 1);
      for (int x = 1; x + 1 < padded; ++x) {
        level1[x] = op(op(level0[x - 1], level0[x]), level0[x + 1]);
      }
    }
    for (int w = 2; w <= r; ++w) {
      const T* previous = runs(y, w - 1);
      T* level = runs(y, w);
      for (int x = w; x < padded - w; ++x) level[x] = op(previous[x - 1], previous[x + 1]);
    }
  };
  int filled = 0;
  for (int y = 0; y < height; ++y) {
    while (filled < height && filled <= y + r) fill(filled++);
    T* out = dst->ptr<T>(y);
    bool first = true;
    for (int dy = -r; dy <= r; ++dy) {
      const int w = half_width[dy + r];
      if (y + dy < 0 || y + dy >= height || w < 0) continue;
      const T* row = runs(y + dy, w) + r;
      if (first) {
        std::copy(row, row + width, out);
        first = false;
      } else {
        for (int x = 0; x < width; ++x) out[x] = op(out[x], row[x]);
      }
    }
  }
}

// The opening (closing for dark dots) of `image` into `background`, at the input's depth:
// the order statistics are the same as in float, and integer filters are faster.
// `intermediate` and `background` have the size and type of `image`.
template <typename T>
void Background(const cv::Mat& image, const std::vector<int>& half_width, bool dark_dots,
                cv::Mat* intermediate, cv::Mat* background, std::vector<unsigned char>* rows) {
  if (dark_dots) {  // closing: dilation, then erosion
    DiscFilter<T, false>(image, half_width, intermediate, rows);
    DiscFilter<T, true>(*intermediate, half_width, background, rows);
  } else {  // opening: erosion, then dilation
    DiscFilter<T, true>(image, half_width, intermediate, rows);
    DiscFilter<T, false>(*intermediate, half_width, background, rows);
  }
}

void BackgroundOfDepth(const cv::Mat& image, const std::vector<int>& half_width, bool dark_dots,
                       cv::Mat* intermediate, cv::Mat* background,
                       std::vector<unsigned char>* rows) {
  if (image.depth() == CV_8U) {
    Background<std::uint8_t>(image, half_width, dark_dots, intermediate, background, rows);
  } else {
    Background<std::uint16_t>(image, half_width, dark_dots, intermediate, background, rows);
  }
}

// The top-left `size` of `storage`, which grows (and only grows) to hold it: work images
// that change size from call to call (regions, full frames) without new allocations.
cv::Mat View(cv::Mat* storage, cv::Size size, int type) {
  if (storage->type() != type || storage->cols < size.width || storage->rows < size.height) {
    storage->create(std::max(storage->rows, size.height), std::max(storage->cols, size.width),
                    type);
  }
  return (*storage)(cv::Rect(cv::Point(0, 0), size));
}

// R = max(0, I - B) (B - I for dark dots) in float. Exact: both are integers below 2^24.
template <typename T>
void Residue(const cv::Mat& image, const cv::Mat& background, bool dark_dots, cv::Mat* residue) {
  const float sign = dark_dots ? -1.0f : 1.0f;
  for (int y = 0; y < image.rows; ++y) {
    const T* in = image.ptr<T>(y);
    const T* bg = background.ptr<T>(y);
    float* out = residue->ptr<float>(y);
    for (int x = 0; x < image.cols; ++x) {
      out[x] = std::max(0.0f, sign * (static_cast<float>(in[x]) - static_cast<float>(bg[x])));
    }
  }
}

// Image noise from the response to the 3 x 3 mask
//   N = [1 -2 1; -2 4 -2; 1 -2 1]
// (J. Immerkaer, "Fast noise variance estimation", Computer Vision and Image Understanding
// 64(2), 1996): N annihilates a locally linear image, and its response to white noise of
// standard deviation s has standard deviation 6 s (the squares of N sum to 36). Immerkaer
// averages |N * I| over the image; here only its smallest 75 % are averaged, so that edges
// and dots (a small part of a frame) do not count, and the mean of a half-normal variable of
// scale s_r below its 75 % quantile q = 1.15035 s_r,
//   E = s_r sqrt(2 / pi) (1 - exp(-q^2 / 2)) / 0.75 = 0.5149 s_r,
// converts it. An average rather than a median: the responses of 8-bit images are integers
// of a few units, which a median would quantise. The responses are sampled on a grid of
// about 2 x 10^4 pixels (the estimate then varies by about 1 %). Sums of integers in double
// are exact, so an image scaled by a power of two gives exactly the scaled estimate.
template <typename T>
double EstimateNoiseSigma(const cv::Mat& image, std::vector<float>* samples) {
  if (image.rows < 3 || image.cols < 3) return 0.0;
  const int inner = (image.rows - 2) * (image.cols - 2);
  const int step = std::max(1, static_cast<int>(std::sqrt(inner / 2.0e4)));
  samples->clear();
  const auto f = [](T v) { return static_cast<float>(v); };
  for (int y = 1; y + 1 < image.rows; y += step) {
    const T* a = image.ptr<T>(y - 1);
    const T* b = image.ptr<T>(y);
    const T* c = image.ptr<T>(y + 1);
    for (int x = 1; x + 1 < image.cols; x += step) {
      const float response = (f(a[x - 1]) - 2.0f * f(a[x]) + f(a[x + 1])) -
                             2.0f * (f(b[x - 1]) - 2.0f * f(b[x]) + f(b[x + 1])) +
                             (f(c[x - 1]) - 2.0f * f(c[x]) + f(c[x + 1]));
      samples->push_back(std::abs(response));
    }
  }
  const std::size_t keep = std::max<std::size_t>(1, samples->size() * 3 / 4);
  std::nth_element(samples->begin(), samples->begin() + (keep - 1), samples->end());
  double sum = 0.0;
  for (std::size_t i = 0; i < keep; ++i) sum += (*samples)[i];
  constexpr double kFraction = 0.75;
  constexpr double kQuantile = 1.1503493803760079;  // standard normal, P(|z| < q) = 0.75
  static const double kTruncatedMean =
      std::sqrt(2.0 / M_PI) * (1.0 - std::exp(-0.5 * kQuantile * kQuantile)) / kFraction;
  return sum / static_cast<double>(keep) / (6.0 * kTruncatedMean);
}

// The grey level of a CV_8U or CV_16U pixel.
double Level(const cv::Mat& image, int y, int x) {
  return image.depth() == CV_8U ? image.at<std::uint8_t>(y, x) : image.at<std::uint16_t>(y, x);
}

void CheckImage(const cv::Mat& image) {
  if (image.empty()) throw InputError("marker detection: the image is empty");
  if (image.type() != CV_8UC1 && image.type() != CV_16UC1) {
    throw InputError(fmt::format(
        "marker detection: expected a single-channel 8-bit or 16-bit image, got type {} "
        "({} channels)",
        image.type(), image.channels()));
  }
}

// The nonzero pixels of `mask` in raster order, read eight at a time: few are set.
void NonZeroPixels(const cv::Mat& mask, std::vector<cv::Point>* pixels) {
  pixels->clear();
  for (int y = 0; y < mask.rows; ++y) {
    const std::uint8_t* row = mask.ptr<std::uint8_t>(y);
    int x = 0;
    for (; x + 8 <= mask.cols; x += 8) {
      std::uint64_t eight;
      std::memcpy(&eight, row + x, sizeof eight);
      if (eight == 0) continue;
      for (int k = x; k < x + 8; ++k) {
        if (row[k] != 0) pixels->emplace_back(k, y);
      }
    }
    for (; x < mask.cols; ++x) {
      if (row[x] != 0) pixels->emplace_back(x, y);
    }
  }
}

// The 8-connected component of nonzero `mask` pixels that holds `seed` (nonzero), into
// `blob`; its pixels are cleared in `mask` on the way.
void TakeComponent(cv::Point seed, cv::Mat* mask, std::vector<cv::Point>* blob) {
  blob->clear();
  mask->at<std::uint8_t>(seed) = 0;
  blob->push_back(seed);
  for (std::size_t i = 0; i < blob->size(); ++i) {
    const cv::Point p = (*blob)[i];
    for (int dy = -1; dy <= 1; ++dy) {
      const int y = p.y + dy;
      if (y < 0 || y >= mask->rows) continue;
      std::uint8_t* row = mask->ptr<std::uint8_t>(y);
      for (int dx = -1; dx <= 1; ++dx) {
        const int x = p.x + dx;
        if (x < 0 || x >= mask->cols || row[x] == 0) continue;
        row[x] = 0;
        blob->emplace_back(x, y);
      }
    }
  }
}

// The radius of the uniform disc with the same (unweighted) second moments as the pixels,
// 2 (l1 l2)^(1/4), and their elongation sqrt(l1 / l2) (pixel centres; a single pixel: radius
// 0, elongation 1).
struct BlobShape {
  double radius_px = 0.0;
  double elongation = 1.0;
  Eigen::Vector2d center_px = Eigen::Vector2d::Zero();  // the pixels' mean position
};
BlobShape ShapeOfPixels(const std::vector<cv::Point>& pixels) {
  const double n = static_cast<double>(pixels.size());
  double sx = 0, sy = 0;
  for (const cv::Point& p : pixels) {
    sx += p.x;
    sy += p.y;
  }
  const double mx = sx / n, my = sy / n;
  double cxx = 0, cyy = 0, cxy = 0;
  for (const cv::Point& p : pixels) {
    cxx += (p.x - mx) * (p.x - mx) / n;
    cyy += (p.y - my) * (p.y - my) / n;
    cxy += (p.x - mx) * (p.y - my) / n;
  }
  // Each pixel is a unit square, not a point: its own variance 1/12 per axis.
  cxx += 1.0 / 12.0;
  cyy += 1.0 / 12.0;
  const double half_trace = 0.5 * (cxx + cyy);
  const double spread = std::hypot(0.5 * (cxx - cyy), cxy);
  const double largest = half_trace + spread, smallest = half_trace - spread;
  BlobShape shape;
  shape.center_px = Eigen::Vector2d(mx, my);
  shape.radius_px = 2.0 * std::pow(std::max(0.0, largest * smallest), 0.25);
  shape.elongation = smallest > 0.0 ? std::sqrt(largest / smallest) : std::numeric_limits<double>::infinity();
  return shape;
}

// The centroid's 1-sigma from the image noise: with weights w_i = max(0, R_i - p) and
// x_c = sum(w_i x_i) / sum(w_i), dx_c / dR_i = (x_i - x_c) / sum(w) for the weighted pixels,
// so sigma_x^2 = sigma_n^2 sum over them of (x_i - x_c)^2 / sum(w)^2 (error propagation,
// common practice); the larger of the two axes.
double CentroidSigmaPx(const cv::Mat& residue, int x0, int y0, int gw, int gh,
                       const std::vector<unsigned char>& near, double pedestal, double mx,
                       double my, double weight_sum, double noise_sigma) {
  double sxx = 0.0, syy = 0.0;
  for (int j = 0; j < gh; ++j) {
    const float* residue_row = residue.ptr<float>(y0 + j) + x0;
    for (int i = 0; i < gw; ++i) {
      if (near[static_cast<std::size_t>(j) * gw + i] != 2 || residue_row[i] <= pedestal) continue;
      sxx += (i - mx) * (i - mx);
      syy += (j - my) * (j - my);
    }
  }
  return noise_sigma * std::sqrt(std::max(sxx, syy)) / weight_sum;
}

// The outline's centre, radius, completeness and sigma for the blob `marks` (coordinates of
// `residue`), searched from `start_px` into `d` (centre in residue coordinates). When no
// outline is found `d` keeps the centroid. False when the blob is less complete than
// options.min_completeness.
bool FitBlobOutline(const cv::Mat& residue, const BlobMarks& marks, const Eigen::Vector2d& start_px,
                    double threshold, const DetectorOptions& options, cv::Mat* gx_storage,
                    cv::Mat* gy_storage, Detection* d) {
  detect_internal::EdgeSearchOptions search;
  // A fall per pixel below a fifth of the threshold is noise (a step of the threshold's
  // height blurred over 2 px falls by a quarter of it per pixel at the steepest).
  search.min_fall = 0.2 * threshold;
  const double reach_px = search.outer_of_radius * d->radius_px + search.outer_margin_px + 1.0;
  const int x0 = std::max(0, static_cast<int>(std::floor(start_px.x() - reach_px)));
  const int y0 = std::max(0, static_cast<int>(std::floor(start_px.y() - reach_px)));
  const int x1 = std::min(residue.cols, static_cast<int>(std::ceil(start_px.x() + reach_px)) + 1);
  const int y1 = std::min(residue.rows, static_cast<int>(std::ceil(start_px.y() + reach_px)) + 1);
  const cv::Rect box(x0, y0, x1 - x0, y1 - y0);
  if (box.width < 3 || box.height < 3) return false;
  cv::Mat gx = View(gx_storage, box.size(), CV_32F);
  cv::Mat gy = View(gy_storage, box.size(), CV_32F);
  detect_internal::SobelGradient(residue, box, &gx, &gy);
  std::vector<EdgePoint> points;
  points.reserve(search.rays);
  detect_internal::FindEdgePoints(gx, gy, box, start_px, d->radius_px, search, &points);
  detect_internal::OutlineFitOptions fit_options;
  fit_options.rays = search.rays;
  const std::optional<Outline> outline = detect_internal::FitOutline(points, fit_options);
  if (!outline) {
    // A blob big enough for an outline whose outline cannot be fitted is not a clean
    // marker (two merged, a glint on a cut one): its centroid is kept for the tracker's
    // continuity with quality 0, which the fit leaves out.
    d->center_px = start_px;
    d->quality = 0.0;
    d->completeness = 0.0;
    return true;
  }
  const detect_internal::CompletenessMeasures m = detect_internal::MeasureCompleteness(*outline, marks);
  if (m.score < options.min_completeness) return false;
  d->center_px = outline->center_px;
  d->radius_px = outline->radius_px;
  d->outline_fitted = true;
  d->outline_rms_px = outline->rms_px;
  d->coverage = m.coverage;
  d->fill = m.fill;
  d->symmetry = m.symmetry;
  d->completeness = m.score;
  d->quality *= m.score;
  d->sigma_px = detect_internal::CenterSigmaPx(*outline, m.score, options.incomplete_bias_of_radius);
  return true;
}

}  // namespace

std::string DetectorOptions::Validate() const {
  if (threshold && !(std::isfinite(*threshold) && *threshold > 0.0)) {
    return fmt::format("threshold must be a finite number of grey levels > 0, got {}", *threshold);
  }
  if (!(std::isfinite(threshold_sigma) && threshold_sigma > 0.0)) {
    return fmt::format("threshold_sigma must be finite and > 0, got {}", threshold_sigma);
  }
  if (!(std::isfinite(min_noise_sigma_levels) && min_noise_sigma_levels >= 0.0)) {
    return fmt::format("min_noise_sigma_levels must be finite and >= 0, got {}",
                       min_noise_sigma_levels);
  }
  if (!(std::isfinite(min_area_px) && min_area_px >= 1.0)) {
    return fmt::format("min_area_px must be finite and >= 1, got {}", min_area_px);
  }
  if (!(std::isfinite(max_area_px) && max_area_px >= min_area_px)) {
    return fmt::format("max_area_px must be finite and >= min_area_px ({}), got {}", min_area_px,
                       max_area_px);
  }
  if (!(max_elongation >= 1.0)) {  // infinity: no limit
    return fmt::format("max_elongation must be >= 1, got {}", max_elongation);
  }
  if (background_radius_px < 1 || background_radius_px > kMaxBackgroundRadiusPx) {
    return fmt::format("background_radius_px must be 1..{}, got {}", kMaxBackgroundRadiusPx,
                       background_radius_px);
  }
  if (!(std::isfinite(min_outline_radius_px) && min_outline_radius_px >= 2.0)) {
    return fmt::format("min_outline_radius_px must be finite and >= 2, got {}",
                       min_outline_radius_px);
  }
  if (!(max_outline_elongation >= 1.0)) {
    return fmt::format("max_outline_elongation must be >= 1, got {}", max_outline_elongation);
  }
  if (!(min_completeness >= 0.0 && min_completeness <= 1.0)) {
    return fmt::format("min_completeness must be 0..1, got {}", min_completeness);
  }
  if (!(std::isfinite(incomplete_bias_of_radius) && incomplete_bias_of_radius >= 0.0)) {
    return fmt::format("incomplete_bias_of_radius must be finite and >= 0, got {}",
                       incomplete_bias_of_radius);
  }
  return {};
}

MarkerDetector::MarkerDetector(const DetectorOptions& options) : options_(options) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw InputError("marker detector options: " + problem);
  disc_half_width_px_ = DiscHalfWidths(options.background_radius_px);
  if (options.separate_from_bands) line_kernels_ = LineKernels(options.background_radius_px);
}

std::vector<Detection> MarkerDetector::Detect(const cv::Mat& image,
                                              const std::vector<cv::Rect>& regions) {
  CheckImage(image);
  const cv::Rect frame(0, 0, image.cols, image.rows);
  if (regions.empty() || noise_sigma_ < 0.0) {
    const double estimate = image.depth() == CV_8U
                                ? EstimateNoiseSigma<std::uint8_t>(image, &work_.noise_samples)
                                : EstimateNoiseSigma<std::uint16_t>(image, &work_.noise_samples);
    // Lossy video: H.264 at its usual quality (CRF 23) removes the sensor noise from flat
    // areas, so the estimate falls towards zero, but leaves artifacts of up to about 20 grey
    // levels at the corners of a 30-level silhouette (measured on the simulated throws of
    // the tests); the floor keeps the threshold above them.
    noise_sigma_ = std::max(estimate, options_.min_noise_sigma_levels);
  }
  // The floor keeps a noise-free image from thresholding at zero.
  const double threshold = options_.threshold
                               ? *options_.threshold
                               : std::max(1.0, options_.threshold_sigma * noise_sigma_);

  std::vector<Detection> detections;
  if (regions.empty()) {
    DetectIn(image, frame, frame, threshold, &detections);
    return detections;
  }
  // The opening reaches 2r from a pixel (r for the erosion, r more for the dilation): with
  // this margin the residue of the region and a ring of 4 pixels around it is exactly that
  // of the full frame, so a dot gives the same centre either way.
  const int margin = 2 * options_.background_radius_px + 4;
  for (const cv::Rect& region : regions) {
    const cv::Rect core = region & frame;
    if (core.empty()) continue;
    const cv::Rect work = cv::Rect(core.x - margin, core.y - margin, core.width + 2 * margin,
                                   core.height + 2 * margin) &
                          frame;
    DetectIn(image, core, work, threshold, &detections);
  }
  // The same blob found from overlapping regions: keep the first.
  std::vector<Detection> merged;
  merged.reserve(detections.size());
  for (const Detection& d : detections) {
    const bool seen = std::any_of(merged.begin(), merged.end(), [&](const Detection& m) {
      return (m.center_px - d.center_px).norm() < kDuplicateDistancePx;
    });
    if (!seen) merged.push_back(d);
  }
  return merged;
}

void MarkerDetector::DetectIn(const cv::Mat& image, const cv::Rect& core, const cv::Rect& work,
                              double threshold, std::vector<Detection>* out) {
  const bool dark = options_.dark_dots;
  const cv::Mat roi = image(work);
  cv::Mat intermediate = View(&work_.intermediate, roi.size(), roi.type());
  cv::Mat background = View(&work_.background, roi.size(), roi.type());
  cv::Mat residue = View(&work_.residue, roi.size(), CV_32F);
  cv::Mat mask = View(&work_.mask, roi.size(), CV_8U);
  BackgroundOfDepth(roi, disc_half_width_px_, dark, &intermediate, &background, &work_.filter_rows);
  if (roi.depth() == CV_8U) {
    Residue<std::uint8_t>(roi, background, dark, &residue);
  } else {
    Residue<std::uint16_t>(roi, background, dark, &residue);
  }
  cv::compare(residue, threshold, mask, cv::CMP_GT);
  NonZeroPixels(mask, &work_.seeds);

  std::vector<cv::Point>& blob = work_.blob;
  for (const cv::Point& seed : work_.seeds) {
    if (mask.at<std::uint8_t>(seed) == 0) continue;  // taken with an earlier seed's blob
    TakeComponent(seed, &mask, &blob);
    if (!MeasureBlob(roi, residue, core, work, threshold, blob, out) && !line_kernels_.empty()) {
      SeparateFromBands(roi, &residue, core, work, threshold, blob, out);
    }
  }
}

// A marker joined above the threshold to a band (the lit edge of a cylindrical handle or of
// a box, a highlight along the body) makes one blob that is refused as too long or not a
// whole marker. Over the blob's box, the background is raised to the brightest opening of the
// image by a line segment as long as the disc's diameter, in kBandOrientations directions
// (closing and darkest for dark dots): a band, as long as the segment in its own direction,
// passes whole into this background, and so do its ends and corners, while a marker (shorter
// than the segment in every direction) keeps what rises above the band (the top-hat by linear
// structuring elements: P. Soille, Morphological Image Analysis, 2nd ed., Springer 2003,
// ch. 4 and 9 -- from memory; common practice for small round features beside thin bright
// structures). The blob's pixels still above the threshold are measured again as blobs of
// their own, with every check a blob passes and their outline fitted on the raised residue,
// so where the band joined a marker its outline counts as missing (completeness). Nothing is
// split further. The residue of the box is restored afterwards, for the blobs
// that follow.
void MarkerDetector::SeparateFromBands(const cv::Mat& roi, cv::Mat* residue, const cv::Rect& core,
                                       const cv::Rect& work, double threshold,
                                       const std::vector<cv::Point>& blob,
                                       std::vector<Detection>* out) {
  const bool dark = options_.dark_dots;
  const int reach = 2 * options_.background_radius_px + 1;
  cv::Rect box = cv::boundingRect(blob);
  box = cv::Rect(box.x - reach, box.y - reach, box.width + 2 * reach, box.height + 2 * reach) &
        cv::Rect(0, 0, roi.cols, roi.rows);
  const cv::Mat image = roi(box);
  cv::Mat line_background;
  cv::Mat opened;
  for (const cv::Mat& kernel : line_kernels_) {
    // The default border of OpenCV's morphology ignores the pixels outside the box.
    cv::morphologyEx(image, opened, dark ? cv::MORPH_CLOSE : cv::MORPH_OPEN, kernel);
    if (line_background.empty()) {
      line_background = opened.clone();
    } else if (dark) {
      cv::min(line_background, opened, line_background);
    } else {
      cv::max(line_background, opened, line_background);
    }
  }
  cv::Mat raised;
  image.convertTo(raised, CV_32F);
  cv::Mat line_levels;
  line_background.convertTo(line_levels, CV_32F);
  if (dark) {
    raised = line_levels - raised;
  } else {
    raised -= line_levels;
  }
  cv::Mat box_residue = (*residue)(box);
  const cv::Mat kept = box_residue.clone();
  // The raised residue is never above the disc's: the larger background of the two.
  raised = cv::max(raised, 0.0);
  cv::min(box_residue, raised, box_residue);
  cv::Mat parts = cv::Mat::zeros(box.size(), CV_8U);
  for (const cv::Point& p : blob) {
    const cv::Point q = p - box.tl();
    if (box_residue.at<float>(q) > threshold) parts.at<std::uint8_t>(q) = 1;
  }
  std::vector<cv::Point> seeds;
  NonZeroPixels(parts, &seeds);
  std::vector<cv::Point> part;
  for (const cv::Point& seed : seeds) {
    if (parts.at<std::uint8_t>(seed) == 0) continue;
    TakeComponent(seed, &parts, &part);
    if (part.size() == blob.size()) continue;  // nothing was taken away: refused as it was
    for (cv::Point& p : part) p += box.tl();
    const std::size_t before = out->size();
    MeasureBlob(roi, *residue, core, work, threshold, part, out);
    // For the tracker and identification only (quality 0, which the fit leaves out): on
    // exactly rendered spheres beside a band (band_separation_test.cpp) these centres are
    // 0.4 px rms off, twice a free sphere's, and a quarter of them outside 3 sigma_px.
    for (std::size_t k = before; k < out->size(); ++k) (*out)[k].quality = 0.0;
  }
  kept.copyTo(box_residue);
}

bool MarkerDetector::MeasureBlob(const cv::Mat& roi, const cv::Mat& residue, const cv::Rect& core,
                                 const cv::Rect& work, double threshold,
                                 const std::vector<cv::Point>& blob, std::vector<Detection>* out) {
  const bool dark = options_.dark_dots;
  const double area = static_cast<double>(blob.size());
  if (area < options_.min_area_px) return true;
  if (area > options_.max_area_px) return false;
  int left = blob[0].x, right = left, top = blob[0].y, bottom = top;
  for (const cv::Point& p : blob) {
    left = std::min(left, p.x);
    right = std::max(right, p.x);
    top = std::min(top, p.y);
    bottom = std::max(bottom, p.y);
  }
  // A blob cut by the edge of the examined area (the frame's edge, or a region's margin)
  // would have a biased centre.
  if (left == 0 || top == 0 || right == work.width - 1 || bottom == work.height - 1) return false;

  // Around the blob, over its box grown by kRingPx (clipped to the work area): 2 marks the
  // blob grown by one pixel (3 x 3 dilation), which takes in the anti-aliased rim; 1 the
  // ring of pixels 2..kRingPx away, the blob's surroundings.
  const int x0 = std::max(0, left - kRingPx);
  const int y0 = std::max(0, top - kRingPx);
  const int gw = std::min(work.width, right + kRingPx + 1) - x0;
  const int gh = std::min(work.height, bottom + kRingPx + 1) - y0;
  std::vector<unsigned char>& near = work_.near_blob;
  near.assign(static_cast<std::size_t>(gw) * gh, 0);
  for (const cv::Point& p : blob) {
    for (int dy = -kRingPx; dy <= kRingPx; ++dy) {
      const int j = p.y + dy - y0;
      if (j < 0 || j >= gh) continue;
      unsigned char* row = &near[static_cast<std::size_t>(j) * gw];
      for (int dx = -kRingPx; dx <= kRingPx; ++dx) {
        const int i = p.x + dx - x0;
        if (i < 0 || i >= gw) continue;
        const unsigned char value = std::abs(dx) <= 1 && std::abs(dy) <= 1 ? 2 : 1;
        row[i] = std::max(row[i], value);
      }
    }
  }
  // The largest residue and summed residue of the grown blob; the extreme grey level of
  // the blob and of its surroundings.
  double peak = 0.0;
  double signal = 0.0;
  double blob_extreme = dark ? std::numeric_limits<double>::infinity()
                             : -std::numeric_limits<double>::infinity();
  double ring_extreme = blob_extreme;
  for (int j = 0; j < gh; ++j) {
    const float* residue_row = residue.ptr<float>(y0 + j) + x0;
    const unsigned char* near_row = &near[static_cast<std::size_t>(j) * gw];
    for (int i = 0; i < gw; ++i) {
      if (near_row[i] == 0) continue;
      const double level = Level(roi, y0 + j, x0 + i);
      if (near_row[i] == 1) {
        ring_extreme = dark ? std::min(ring_extreme, level) : std::max(ring_extreme, level);
        continue;
      }
      blob_extreme = dark ? std::min(blob_extreme, level) : std::max(blob_extreme, level);
      peak = std::max(peak, static_cast<double>(residue_row[i]));
      signal += residue_row[i];
    }
  }
  // A dot rises above everything around it. The corner of a silhouette (which the
  // opening also cuts off) does not: its pixels are at the level of the body beside it.
  const double prominence = dark ? ring_extreme - blob_extreme : blob_extreme - ring_extreme;
  if (prominence <= threshold) return false;

  // Thresholded centre of gravity: weights w = max(0, R - p) with the pedestal
  // p = kPedestalOfPeak x peak, the centroid sum(w (x, y)) / sum(w) and second moments over
  // the grown blob, coordinates relative to the box (pixel centres at integers). The
  // pedestal keeps out of the weights the skirt around a dot: clamped noise (a positive
  // bias) and, in lossy video, the ringing that H.264 leaves around a bright dot (common
  // practice in Shack-Hartmann and star-tracker centroiding, e.g. S. Thomas et al., MNRAS
  // 371, 2006, from memory). Measured on the simulated throws of the tests, centre rms
  // without -> with the pedestal: rendered frames 0.023 -> 0.018 px (facing view) and
  // 0.020 -> 0.022 px (oblique view); through H.264 at a threshold of 12, 0.43 -> 0.08 px.
  const double pedestal = kPedestalOfPeak * peak;
  double s = 0, sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0;
  for (int j = 0; j < gh; ++j) {
    const float* residue_row = residue.ptr<float>(y0 + j) + x0;
    const unsigned char* near_row = &near[static_cast<std::size_t>(j) * gw];
    for (int i = 0; i < gw; ++i) {
      if (near_row[i] != 2) continue;
      const double weight = std::max(0.0, residue_row[i] - pedestal);
      s += weight;
      sx += weight * i;
      sy += weight * j;
      sxx += weight * i * i;
      sxy += weight * i * j;
      syy += weight * j * j;
    }
  }
  const double mx = sx / s;  // s > 0: the peak pixel has weight 0.9 peak > 0
  const double my = sy / s;
  const Eigen::Vector2d center_px(work.x + x0 + mx, work.y + y0 + my);
  // Reported only by the region that holds its centre: dots in a region's margin are not
  // the region's.
  if (center_px.x() < core.x - 0.5 || center_px.x() >= core.x + core.width - 0.5 ||
      center_px.y() < core.y - 0.5 || center_px.y() >= core.y + core.height - 0.5) {
    return true;
  }
  // Principal variances of the weighted second central moments (eigenvalues of the 2 x 2
  // covariance) and elongation = sqrt(largest / smallest), the ratio of the principal
  // standard deviations; 1 for a single pixel (both zero), infinite for a line of pixels.
  const double cxx = sxx / s - mx * mx;
  const double cyy = syy / s - my * my;
  const double cxy = sxy / s - mx * my;
  const double half_trace = 0.5 * (cxx + cyy);
  const double radius = std::hypot(0.5 * (cxx - cyy), cxy);
  const double largest = half_trace + radius;
  const double smallest = half_trace - radius;
  const double elongation = largest <= 0.0  ? 1.0
                            : smallest > 0.0 ? std::sqrt(largest / smallest)
                                             : std::numeric_limits<double>::infinity();
  if (elongation > options_.max_elongation) return false;

  Detection d;
  d.center_px = center_px;
  d.area_px = area;
  d.signal = signal;
  d.peak = peak;
  d.elongation = elongation;
  d.radius_px = std::sqrt(area / std::numbers::pi);
  // quality = min(1, SNR / 50) / elongation, SNR = peak / noise sigma: 1 for a round dot
  // 50 sigma above its background; a faint or stretched blob scores less.
  const double snr =
      noise_sigma_ > 0.0 ? peak / noise_sigma_ : std::numeric_limits<double>::infinity();
  d.quality = std::min(1.0, snr / 50.0) / elongation;
  d.sigma_px = CentroidSigmaPx(residue, x0, y0, gw, gh, near, pedestal, mx, my, s, noise_sigma_);
  // The blob's size for the choice of centre: the radius of the uniform disc with the
  // same weighted second moments, r = 2 (l1 l2)^(1/4) (a disc of radius r has variance
  // r^2 / 4 along every axis). Thresholded areas of small dots in lossy video swell with
  // the codec's ringing; the moments, less the pedestal, do not.
  const double moment_radius_px = 2.0 * std::pow(std::max(0.0, largest * smallest), 0.25);
  // A sphere lit from one side concentrates its residue in the lit crescent, so the
  // weighted moments are those of the crescent: small, and elongated. The thresholded
  // pixels (unweighted) see the whole disc where the dark side clears the threshold, so a
  // blob whose thresholded pixels make a round disc of min_outline_radius_px + 0.5 or
  // more (the half pixel allowing for the swelling of small dots in lossy video) takes its
  // outline as well. Measured on the imaging study's clips (shaded spheres and dots on
  // curved parts, 4-5 px radius): 12-40 % of the whole markers took the centroid, 1.5-2 px
  // towards the light, before this rule.
  const BlobShape pixels = ShapeOfPixels(blob);
  const bool round_weighted = moment_radius_px >= options_.min_outline_radius_px &&
                              elongation <= options_.max_outline_elongation;
  const bool round_pixels = pixels.radius_px >= options_.min_outline_radius_px + 0.5 &&
                            pixels.elongation <= options_.max_outline_elongation;
  const BlobMarks marks{&near, x0, y0, gw, gh, 2};
  // A blob of outline size that is neither round nor symmetric about its centroid (a streak
  // is): a lit crescent whose dark side stays under the threshold, or a marker cut by an
  // edge. Its outline's rim arc places it; its centroid lies towards the light by up to half
  // the radius (1.3-2 px on the imaging study's clips).
  const bool lopsided = !round_weighted && !round_pixels &&
                        std::sqrt(area / std::numbers::pi) >= options_.min_outline_radius_px &&
                        detect_internal::Symmetry(Eigen::Vector2d(x0 + mx, y0 + my), marks) < kLopsidedSymmetry;
  if (options_.centre == CentreMethod::kOutline && (round_weighted || round_pixels || lopsided)) {
    const Detection centroid = d;
    if (!FitBlobOutline(residue, marks, Eigen::Vector2d(x0 + mx, y0 + my), threshold, options_,
                        &work_.gradient_x, &work_.gradient_y, &d)) {
      if (round_weighted) return false;
      // A blob tried for its pixels' size or shape alone keeps its centroid when its outline
      // is not complete enough: a small dot swollen by the codec's ringing (whose centroid is
      // good), or, lopsided or lit from one side, the rest of a marker mostly hidden or a
      // crescent, kept for the tracker's continuity with quality 0 (the fit leaves it out).
      d = centroid;
      // The centroid of a lit crescent lies towards the light from its pixels' mean; a
      // dot's (symmetric in brightness) does not.
      const double shift_px = (Eigen::Vector2d(x0 + mx, y0 + my) - pixels.center_px).norm();
      if (lopsided || shift_px > kLopsidedShiftPx) d.quality = 0.0;
      d.center_px -= Eigen::Vector2d(work.x, work.y);
    }
    d.center_px += Eigen::Vector2d(work.x, work.y);
    if (d.center_px.x() < core.x - 0.5 || d.center_px.x() >= core.x + core.width - 0.5 ||
        d.center_px.y() < core.y - 0.5 || d.center_px.y() >= core.y + core.height - 0.5) {
      return true;
    }
  }
  out->push_back(d);
  return true;
}

cv::Mat DetectionBackground(const cv::Mat& image, int radius_px, bool dark_dots) {
  CheckImage(image);
  if (radius_px < 1 || radius_px > kMaxBackgroundRadiusPx) {
    throw InputError(fmt::format("marker detection: the background radius must be 1..{} px, got {}",
                                 kMaxBackgroundRadiusPx, radius_px));
  }
  cv::Mat intermediate(image.size(), image.type());
  cv::Mat background(image.size(), image.type());
  std::vector<unsigned char> rows;
  BackgroundOfDepth(image, DiscHalfWidths(radius_px), dark_dots, &intermediate, &background, &rows);
  return background;
}

}  // namespace tumbletrace
