// The views of a target in a folder of images or a clip.
#pragma once

#include <filesystem>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/calibrate/detect_target.hpp"

namespace tumbletrace {

struct CollectOptions {
  int step = 1;  // read every step-th image or frame
  // A view whose features lie within this rms distance of a view already kept (over the
  // features both show, at least half of each) is a near-repeat and skipped: a clip holds
  // many frames of nearly the same pose, whose shared blur and lighting would make the
  // calibration look more certain than it is, and cost time. Empty: 2 % of the image
  // diagonal; 0 keeps every view. Pixels.
  std::optional<double> min_change_px;

  std::string Validate() const;  // empty when valid
};

struct CollectedViews {
  std::vector<TargetView> views;     // the images in which the target was found (kept)
  std::vector<std::string> missed;   // the images in which it was not
  std::vector<std::string> repeats;  // found, but near-repeats of a kept view: skipped
  double min_change_px = 0.0;        // the near-repeat distance used
  int images_read = 0;
  bool from_clip = false;            // a video file (frames) rather than a folder (images)
};

// Reads every `options.step`-th image of a folder of numbered images or a video file (frame
// sources of the clip module) and finds the target in each; keeps the views that are not
// near-repeats of earlier ones. `progress` (may be empty) is called after each image with
// the number read. Throws InputError for an unreadable source or bad options.
CollectedViews CollectTargetViews(const std::filesystem::path& source,
                                  const CalibrationTarget& target, const CollectOptions& options,
                                  const std::function<void(int)>& progress);

// The rms distance between the features two views both show, px; empty when they share
// fewer than half of either view's features.
std::optional<double> ViewDistancePx(const TargetView& a, const TargetView& b);

}  // namespace tumbletrace
