// The views of a target in a folder of images or a clip.
#pragma once

#include <filesystem>
#include <functional>
#include <string>
#include <vector>

#include "tumbletrace/calibrate/detect_target.hpp"

namespace tumbletrace {

struct CollectedViews {
  std::vector<TargetView> views;     // the images in which the target was found
  std::vector<std::string> missed;   // the images in which it was not
  int images_read = 0;
};

// Reads every `step`-th image of a folder of numbered images or a video file (frame
// sources of the clip module) and finds the target in each. `progress` (may be empty) is
// called after each image with the number read. Throws InputError for an unreadable source.
CollectedViews CollectTargetViews(const std::filesystem::path& source,
                                  const CalibrationTarget& target, int step,
                                  const std::function<void(int)>& progress);

}  // namespace tumbletrace
