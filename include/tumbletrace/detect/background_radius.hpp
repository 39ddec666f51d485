// The radius of the detector's background filter, chosen from the clip itself when the
// session does not give one: the grey opening must be wider than a marker's image (a disc
// of diameter d is removed by a disc filter of radius r only when d < 2r + 1), or it keeps
// part of the marker in the background and the marker's centre and size come out wrong.
#pragma once

#include <opencv2/core.hpp>

#include "tumbletrace/detect/marker_detector.hpp"

namespace tumbletrace {

struct BackgroundRadiusChoice {
  int radius_px = 4;            // the radius to use
  int blobs = 0;                // blobs measured in the sizing pass (0: the default kept)
  double median_diameter_px = 0.0;  // their median equivalent diameter, 2 sqrt(area / pi)
};

// Detects once over the whole image with a wide filter (radius `sizing_radius_px`) and
// takes the markers' median equivalent diameter d: radius = ceil(0.65 d), so that a
// marker up to 30 % larger than the median (nearer the camera, blurred) is still removed
// from the background, and never below `options.background_radius_px` (the default for
// small dots). The median, not the largest, and of the marker-like blobs (quality above
// 0, elongation up to 1.5: round and whole) when there are any: a part of the body narrow
// enough to pass the sizing filter, or a lit face of it, is one blob among the markers, and
// in a frame where few markers are seen it would be the median. Without blobs, the
// options' radius stays.
BackgroundRadiusChoice ChooseBackgroundRadius(const cv::Mat& image, const DetectorOptions& options,
                                              int sizing_radius_px = 16);

}  // namespace tumbletrace
