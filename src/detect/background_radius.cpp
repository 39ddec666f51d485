#include "tumbletrace/detect/background_radius.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <vector>

namespace tumbletrace {

BackgroundRadiusChoice ChooseBackgroundRadius(const cv::Mat& image, const DetectorOptions& options,
                                              int sizing_radius_px) {
  BackgroundRadiusChoice choice;
  choice.radius_px = options.background_radius_px;
  DetectorOptions sizing = options;
  sizing.background_radius_px = std::max(sizing_radius_px, options.background_radius_px);
  MarkerDetector detector(sizing);
  // Marker-like blobs only (quality above 0 and elongation up to 1.5: round and whole),
  // when there are any: a lit face of the body that passes the wide filter is one blob, or
  // two, and in a frame where few markers are seen it would be the median.
  const std::vector<Detection> found = detector.Detect(image);
  const auto marker_like = [](const Detection& d) { return d.quality > 0.0 && d.elongation <= 1.5; };
  const bool any_marker_like = std::any_of(found.begin(), found.end(), marker_like);
  std::vector<double> diameters;
  for (const Detection& d : found) {
    if (any_marker_like && !marker_like(d)) continue;
    diameters.push_back(2.0 * std::sqrt(d.area_px / std::numbers::pi));
  }
  choice.blobs = static_cast<int>(diameters.size());
  if (diameters.empty()) return choice;
  std::nth_element(diameters.begin(), diameters.begin() + diameters.size() / 2, diameters.end());
  choice.median_diameter_px = diameters[diameters.size() / 2];
  choice.radius_px = std::clamp(static_cast<int>(std::ceil(0.65 * choice.median_diameter_px)),
                                options.background_radius_px, sizing.background_radius_px);
  return choice;
}

}  // namespace tumbletrace
