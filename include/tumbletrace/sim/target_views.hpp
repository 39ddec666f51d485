// A simulated camera set-up: a clip of a printed target waved in front of the camera (what
// `calibrate` reads) and one image of a target placed in the throw region (what `locate`
// reads), rendered through the camera's true intrinsics and pose, with the truth to compare.
//
// The scenario file (docs/scenario.md, "Camera set-up scenario"):
//   kind: target-views
//   camera: camera.yaml          # the true camera: intrinsics, and the pose for `placed`
//   target: target.yaml          # the target in the clip
//   views: 20                    # distinct poses of the target
//   hold_frames: 3               # frames per pose (a hand-held target lingers, and shakes)
//   tilt_deg: [30, 55]           # tilt range from head-on
//   playback_fps: 30
//   noise: {image_sigma_levels: 1.0, seed: 7}
//   placed:                      # optional
//     target: big_target.yaml
//     world_from_target: {rotation: [[...], [...], [...]], translation_m: [x, y, z]}
#pragma once

#include <cstdint>
#include <filesystem>
#include <functional>
#include <optional>

#include "tumbletrace/calibrate/target.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

struct PlacedTarget {
  CalibrationTarget target;
  RigidTransform world_from_target;
};

struct TargetViewsScenario {
  Camera camera;
  CalibrationTarget target;
  int views = 20;
  int hold_frames = 3;
  double min_tilt_deg = 30.0, max_tilt_deg = 55.0;
  double aim_span = 0.3;            // of the image the targets' centres are aimed over
  double hand_shake_m = 0.5e-3;     // 1-sigma of the target's wander between held frames
  double playback_fps = 30.0;
  double image_noise_levels = 1.0;
  int supersampling = 2;
  std::uint64_t seed = 1;
  std::optional<PlacedTarget> placed;
};

// True when `path`'s top-level `kind` is "target-views".
bool IsTargetViewsScenario(const std::filesystem::path& path);
// Reads the scenario strictly (paths relative to the file). Throws InputError.
TargetViewsScenario ReadTargetViewsScenario(const std::filesystem::path& path);

struct TargetViewsOutput {
  int frames = 0;
  bool placed = false;
};

// Writes DIR/target_views.mp4 (H.264), DIR/placed.png (when placed) and DIR/truth.json
// (the camera's intrinsics and pose). `progress(done, total)` after each frame (may be empty).
TargetViewsOutput SimulateTargetViews(const TargetViewsScenario& scenario,
                                      const std::filesystem::path& out_dir,
                                      const std::function<void(int, int)>& progress);

}  // namespace tumbletrace
