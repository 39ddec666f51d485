// The side files of the set-up commands (docs/files.md): calibration.json beside the
// camera.yaml that `calibrate` writes, pose.json beside the one `locate` writes.
#pragma once

#include <filesystem>
#include <string>

#include "tumbletrace/calibrate/calibrate_camera.hpp"
#include "tumbletrace/calibrate/locate_camera.hpp"

namespace tumbletrace {

// The intrinsics, their 1-sigma, the per-view rms and outliers with the criterion, the
// coverage map and the orientation checks, the warnings.
void WriteCalibrationJson(const CameraCalibration& calibration, const CalibrationTarget& target,
                          const std::filesystem::path& path);

// The pose, its covariance and 1-sigma (rotation deg, translation mm), the camera centre in
// the world, the rms; `source` says what it was located from.
void WritePoseJson(const CameraPose& pose, const std::string& source,
                   const std::filesystem::path& path);

// The text the commands print: every number with its unit; the coverage map; warnings and
// the reasons a calibration is weak.
std::string CalibrationText(const CameraCalibration& calibration, const CalibrationTarget& target);
std::string PoseText(const CameraPose& pose);

}  // namespace tumbletrace
