// Poses of a planar calibration target in front of a camera, as a person calibrating would
// hold it: spread over the image at varied tilts (seeded), the whole sheet in view.
#pragma once

#include <cstdint>
#include <vector>

#include "tumbletrace/calibrate/target.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

// True when every corner of the target's sheet projects inside the image with `margin_px`,
// and lies within the undistorted field of view: beyond it the distortion polynomial turns
// over and folds far-off points back into the image.
bool SheetInImage(const CalibrationTarget& target, const CameraIntrinsics& k,
                  const RigidTransform& camera_from_board, double margin_px);

// `count` board poses: the sheet's centre aimed at points spread over the middle `aim_span`
// of the image's width and height (a jittered 5 x 4 grid), tilted by
// `min_tilt_deg`..`max_tilt_deg` about an axis in the image plane that turns from view to
// view, turned about its normal by up to 20 degrees, and placed as close as the whole sheet
// stays inside the image. The board's printed face looks at the camera (board z along the
// optical axis before tilting). A wide span (0.7) gives small boards near the edges; a
// narrow one (below 0.7) boards that fill most of the frame, with every fourth view aimed
// towards a corner of the image in turn, which pin the principal point about twice as well
// (docs/method.md, "Calibration").
std::vector<RigidTransform> BoardPoses(const CalibrationTarget& target, const CameraIntrinsics& k,
                                       int count, double min_tilt_deg, double max_tilt_deg,
                                       std::uint64_t seed, double aim_span = 0.7);

}  // namespace tumbletrace
