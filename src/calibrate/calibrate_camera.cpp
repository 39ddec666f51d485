#include "tumbletrace/calibrate/calibrate_camera.hpp"

#include <fmt/format.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <opencv2/calib3d.hpp>
#include <opencv2/core/version.hpp>
#include <opencv2/core/eigen.hpp>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/model/camera_opencv.hpp"

namespace tumbletrace {
namespace {

constexpr double kDeg = 180.0 / M_PI;

double Median(std::vector<double> v) {
  const auto mid = v.begin() + v.size() / 2;
  std::nth_element(v.begin(), mid, v.end());
  return *mid;
}

struct OpenCvViews {
  std::vector<std::vector<cv::Point3f>> object;
  std::vector<std::vector<cv::Point2f>> image;
};

OpenCvViews ToOpenCv(const std::vector<const TargetView*>& views, const CalibrationTarget& target) {
  const std::vector<Eigen::Vector3d> features = target.FeaturePoints();
  OpenCvViews out;
  for (const TargetView* view : views) {
    std::vector<cv::Point3f> object;
    std::vector<cv::Point2f> image;
    for (size_t i = 0; i < view->ids.size(); ++i) {
      const Eigen::Vector3d& x = features.at(view->ids[i]);
      object.emplace_back(x.x(), x.y(), x.z());
      image.emplace_back(view->pixels[i].x(), view->pixels[i].y());
    }
    out.object.push_back(std::move(object));
    out.image.push_back(std::move(image));
  }
  return out;
}

// Sum of squared residual components of one view, px^2.
double SumSquares(const std::vector<cv::Point3f>& object, const std::vector<cv::Point2f>& image,
                  const cv::Mat& rvec, const cv::Mat& tvec, const cv::Mat& k, const cv::Mat& d) {
  std::vector<cv::Point2f> projected;
  cv::projectPoints(object, rvec, tvec, k, d, projected);
  double sum = 0.0;
  for (size_t i = 0; i < image.size(); ++i) {
    const cv::Point2f e = projected[i] - image[i];
    sum += e.x * e.x + e.y * e.y;
  }
  return sum;
}

RigidTransform FromRodrigues(const cv::Mat& rvec, const cv::Mat& tvec) {
  cv::Mat r;
  cv::Rodrigues(rvec, r);
  RigidTransform pose;
  cv::cv2eigen(r, pose.rotation);
  cv::Mat t;
  tvec.convertTo(t, CV_64F);
  pose.translation_m = Eigen::Vector3d(t.at<double>(0), t.at<double>(1), t.at<double>(2));
  return pose;
}

struct Pass {
  cv::Mat k, d, std_intrinsics, per_view;
  std::vector<cv::Mat> rvecs, tvecs;
};

Pass RunOpenCv(const OpenCvViews& views, cv::Size size, const CalibrationOptions& options) {
  Pass pass;
  int flags = 0;
  if (!options.estimate_k3) flags |= cv::CALIB_FIX_K3;
  if (!options.estimate_tangential) flags |= cv::CALIB_ZERO_TANGENT_DIST;
  cv::Mat std_extrinsics;
  try {
    cv::calibrateCamera(views.object, views.image, size, pass.k, pass.d, pass.rvecs, pass.tvecs,
                        pass.std_intrinsics, std_extrinsics, pass.per_view, flags,
                        cv::TermCriteria(cv::TermCriteria::COUNT + cv::TermCriteria::EPS, 200,
                                         1e-15));
  } catch (const cv::Exception& e) {
    throw DataError(fmt::format("OpenCV's calibration failed on these views ({}); the views may "
                                "all show the board from one direction",
                                e.err));
  }
#if CV_VERSION_MAJOR < 4 || (CV_VERSION_MAJOR == 4 && CV_VERSION_MINOR < 7)
  // OpenCV before 4.7 divides the residuals' sum of squares by (points - parameters) where
  // the residual count is twice the points (opencv/opencv issue 19803, fixed by pull
  // request 22992): its variance is about twice the least-squares estimate
  // sum r^2 / (2 points - parameters), and its standard deviations sqrt(2) too large.
  // Rescaled here to the unbiased estimate.
  {
    int points = 0;
    for (const auto& view : views.object) points += static_cast<int>(view.size());
    const int parameters = 6 + (options.estimate_tangential ? 2 : 0) + (options.estimate_k3 ? 1 : 0) +
                           6 * static_cast<int>(views.object.size());
    if (2 * points > parameters && points > parameters) {
      pass.std_intrinsics *= std::sqrt(double(points - parameters) / double(2 * points - parameters));
    }
  }
#endif
  if (!cv::checkRange(pass.k) || !cv::checkRange(pass.d) || pass.k.at<double>(0, 0) <= 0 ||
      pass.k.at<double>(1, 1) <= 0) {
    throw DataError("the calibration did not give finite, positive focal lengths: the views "
                    "do not determine the intrinsics (boards all parallel, or too few views)");
  }
  return pass;
}

}  // namespace

std::string CalibrationOptions::Validate() const {
  if (!(outlier_factor > 1)) return "outlier_factor must exceed 1";
  if (!(outlier_floor_px >= 0)) return "outlier_floor_px must be at least 0 px";
  if (min_views < 3) return "min_views must be at least 3 (Zhang 2000)";
  if (coverage_columns < 2 || coverage_rows < 2) return "the coverage grid needs at least 2 x 2 cells";
  if (!(min_coverage_fraction >= 0 && min_coverage_fraction <= 1)) return "min_coverage_fraction must be in [0, 1]";
  if (!(weak_tilt_deg > 0 && weak_tilt_deg < 90)) return "weak_tilt_deg must be in (0, 90) deg";
  if (!(warn_sigma_principal_px > 0)) return "warn_sigma_principal_px must exceed 0 px";
  return "";
}

CameraCalibration CalibrateCamera(const std::vector<TargetView>& views,
                                  const CalibrationTarget& target,
                                  const CalibrationOptions& options) {
  if (const std::string why = options.Validate(); !why.empty()) {
    throw InputError("calibration options: " + why);
  }
  if (static_cast<int>(views.size()) < options.min_views) {
    throw DataError(fmt::format(
        "the target was found in {} image(s); a calibration needs at least {} views with "
        "distinct orientations (Zhang 2000: each view gives two constraints on the five "
        "intrinsics)",
        views.size(), options.min_views));
  }
  const cv::Size size = views.front().image_size;
  for (const TargetView& v : views) {
    if (v.image_size != size) {
      throw InputError(fmt::format("{}: the image is {} x {} px, the first view {} x {} px; a "
                                   "calibration needs one image size",
                                   v.name, v.image_size.width, v.image_size.height, size.width,
                                   size.height));
    }
  }

  CameraCalibration out;
  out.outlier_criterion = fmt::format(
      "a view is left out when its rms exceeds {:g} times the median of the views' rms and "
      "{:g} px; the calibration is then repeated without it",
      options.outlier_factor, options.outlier_floor_px);
  std::vector<bool> kept(views.size(), true);
  Pass pass;
  for (int round = 0; round < 3; ++round) {
    std::vector<const TargetView*> used;
    for (size_t i = 0; i < views.size(); ++i) {
      if (kept[i]) used.push_back(&views[i]);
    }
    if (static_cast<int>(used.size()) < options.min_views) {
      throw DataError(fmt::format(
          "only {} of {} views remain after leaving out the outliers ({}); a calibration needs "
          "at least {}",
          used.size(), views.size(), out.outlier_criterion, options.min_views));
    }
    const OpenCvViews cv_views = ToOpenCv(used, target);
    pass = RunOpenCv(cv_views, size, options);
    // Every view's rms with these intrinsics (a left-out view is posed by PnP).
    const OpenCvViews all = ToOpenCv([&] {
      std::vector<const TargetView*> p;
      for (const TargetView& v : views) p.push_back(&v);
      return p;
    }(), target);
    out.views.clear();
    std::vector<double> rms_kept;
    size_t used_index = 0;
    for (size_t i = 0; i < views.size(); ++i) {
      cv::Mat rvec, tvec;
      if (kept[i]) {
        rvec = pass.rvecs[used_index];
        tvec = pass.tvecs[used_index];
        ++used_index;
      } else {
        cv::solvePnP(all.object[i], all.image[i], pass.k, pass.d, rvec, tvec);
      }
      CalibrationView view;
      view.name = views[i].name;
      view.points = static_cast<int>(views[i].ids.size());
      view.rms_px = std::sqrt(SumSquares(all.object[i], all.image[i], rvec, tvec, pass.k, pass.d) /
                              (2.0 * view.points));
      view.camera_from_target = FromRodrigues(rvec, tvec);
      const Eigen::Vector3d normal = view.camera_from_target.rotation.col(2);
      view.tilt_deg = std::acos(std::min(1.0, std::abs(normal.z()))) * kDeg;
      view.outlier = !kept[i];
      if (kept[i]) rms_kept.push_back(view.rms_px);
      out.views.push_back(view);
    }
    const double limit = std::max(options.outlier_factor * Median(rms_kept), options.outlier_floor_px);
    bool changed = false;
    for (size_t i = 0; i < views.size(); ++i) {
      if (kept[i] && out.views[i].rms_px > limit) {
        kept[i] = false;
        changed = true;
      }
    }
    if (!changed) break;
  }

  // The result.
  CameraIntrinsics& k = out.intrinsics;
  k.width_px = size.width;
  k.height_px = size.height;
  k.fx_px = pass.k.at<double>(0, 0);
  k.fy_px = pass.k.at<double>(1, 1);
  k.cx_px = pass.k.at<double>(0, 2);
  k.cy_px = pass.k.at<double>(1, 2);
  for (int i = 0; i < 5; ++i) k.distortion[i] = pass.d.at<double>(i);
  // OpenCV's standard deviations: sqrt of the diagonal of (J^T J)^-1 scaled by the residual
  // variance (rescaled above), in the order fx, fy, cx, cy, k1, k2, p1, p2, k3, ...
  const auto sd = [&](int i) { return pass.std_intrinsics.at<double>(i); };
  for (int i = 0; i < 4; ++i) out.sigma_fx_fy_cx_cy_px[i] = sd(i);
  const bool estimated[5] = {true, true, options.estimate_tangential, options.estimate_tangential,
                             options.estimate_k3};
  for (int i = 0; i < 5; ++i) {
    if (estimated[i]) out.sigma_distortion[i] = sd(4 + i);
  }

  double sum_sq = 0.0;
  int features = 0;
  std::vector<Eigen::Vector2d> kept_pixels;
  std::vector<Eigen::Vector3d> normals;
  for (size_t i = 0; i < views.size(); ++i) {
    const CalibrationView& v = out.views[i];
    if (v.outlier) {
      out.warnings.push_back(fmt::format("view {} left out: its rms {:.3f} px is an outlier ({})",
                                         v.name, v.rms_px, out.outlier_criterion));
      continue;
    }
    ++out.views_used;
    sum_sq += v.rms_px * v.rms_px * 2.0 * v.points;
    features += v.points;
    kept_pixels.insert(kept_pixels.end(), views[i].pixels.begin(), views[i].pixels.end());
    normals.push_back(v.camera_from_target.rotation.col(2));
    out.max_tilt_deg = std::max(out.max_tilt_deg, v.tilt_deg);
  }
  out.rms_px = std::sqrt(sum_sq / (2.0 * features));
  for (size_t a = 0; a < normals.size(); ++a) {
    for (size_t b = a + 1; b < normals.size(); ++b) {
      out.normal_spread_deg = std::max(
          out.normal_spread_deg, std::acos(std::min(1.0, std::abs(normals[a].dot(normals[b])))) * kDeg);
    }
  }

  // Coverage of the image.
  out.coverage = MapCoverage(kept_pixels, size.width, size.height, options.coverage_columns,
                             options.coverage_rows);
  if (out.coverage.TouchedFraction() < options.min_coverage_fraction) {
    out.warnings.push_back(fmt::format(
        "the views' features touch {:.0f} % of the image's {} x {} cells (less than {:.0f} %): "
        "the distortion is extrapolated in the rest; add views with the board near the edges",
        100 * out.coverage.TouchedFraction(), out.coverage.columns, out.coverage.rows,
        100 * options.min_coverage_fraction));
  }
  if (!out.coverage.CornersTouched()) {
    out.warnings.push_back("no view puts features in every corner cell of the image, where the "
                           "distortion is largest: add views with the board in the corners");
  }
  if (out.views_used < options.recommended_views) {
    out.warnings.push_back(fmt::format("{} views were used; {} or more at varied orientations "
                                       "give a steadier calibration (common practice)",
                                       out.views_used, options.recommended_views));
  }
  // The principal point trades off with the tangential terms and is seen through the
  // boards' perspective: small boards near the edges leave it loose.
  const double sigma_principal =
      std::max(out.sigma_fx_fy_cx_cy_px[2], out.sigma_fx_fy_cx_cy_px[3]);
  if (!(sigma_principal <= options.warn_sigma_principal_px)) {
    out.warnings.push_back(fmt::format(
        "the principal point is uncertain: 1-sigma cx {:.2f} px, cy {:.2f} px (above {:g} px); "
        "add views in which the board fills most of the frame, tilted 30-55 deg in different "
        "directions",
        out.sigma_fx_fy_cx_cy_px[2], out.sigma_fx_fy_cx_cy_px[3], options.warn_sigma_principal_px));
  }

  // Orientation: Zhang (2000) — views of parallel planes add no constraint on the
  // intrinsics beyond the first, and a head-on view leaves the focal length confounded with
  // the board's distance.
  if (out.max_tilt_deg < options.weak_tilt_deg) {
    out.weak = true;
    out.weak_reasons.push_back(fmt::format(
        "every view is within {:.1f} deg of head-on (limit {:g} deg): with the board parallel "
        "to the image the focal length cannot be told from the board's distance (Zhang 2000); "
        "tilt the board by 20-45 deg in different directions",
        out.max_tilt_deg, options.weak_tilt_deg));
  } else if (out.normal_spread_deg < options.weak_tilt_deg) {
    out.weak = true;
    out.weak_reasons.push_back(fmt::format(
        "the boards of all views are within {:.1f} deg of parallel to each other (limit {:g} "
        "deg): parallel views add no constraint beyond the first (Zhang 2000); tilt the board "
        "in different directions",
        out.normal_spread_deg, options.weak_tilt_deg));
  }
  for (int i = 0; i < 2; ++i) {
    const double f = i == 0 ? k.fx_px : k.fy_px;
    const double relative = out.sigma_fx_fy_cx_cy_px[i] / f;
    if (!(relative <= options.weak_relative_sigma_focal)) {
      out.weak = true;
      out.weak_reasons.push_back(fmt::format(
          "the 1-sigma of {} is {:.2f} % of its value (limit {:g} %)", i == 0 ? "fx" : "fy",
          100 * relative, 100 * options.weak_relative_sigma_focal));
    }
  }
  return out;
}

}  // namespace tumbletrace
