// The camera set-up commands: `calibrate` and `locate`.
#include <fmt/format.h>
#include <unistd.h>

#include <cstdio>
#include <iostream>
#include <opencv2/imgcodecs.hpp>

#include "commands.hpp"
#include "tumbletrace/calibrate/calibrate_camera.hpp"
#include "tumbletrace/calibrate/collect_views.hpp"
#include "tumbletrace/calibrate/locate_camera.hpp"
#include "tumbletrace/calibrate/reports.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace::cli {
namespace {

bool ShowProgress(const CommonOptions& common) { return !common.quiet && isatty(fileno(stderr)); }

// Outputs never overwrite an input (docs/files.md).
void RefuseOverwrite(const std::filesystem::path& output, const std::filesystem::path& input) {
  std::error_code error;
  if (std::filesystem::exists(output) && std::filesystem::equivalent(output, input, error)) {
    throw InputError(fmt::format("-o: {} would overwrite the input {}; expected another output "
                                 "folder",
                                 output.string(), input.string()));
  }
}

}  // namespace

int RunCalibrate(const CalibrateOptions& options, const CommonOptions& common) {
  const CalibrationTarget target = ReadTargetYaml(options.target);
  if (!options.print_svg.empty()) {
    WriteTargetSvg(target, options.print_svg);
    if (!common.quiet) {
      std::cout << fmt::format("Wrote the {} target to {}: print it at 100 % (no scaling), check "
                               "a pitch of {:g} mm with a ruler, and mount it flat.\n",
                               TargetKindName(target.kind), options.print_svg.string(),
                               1e3 * target.pitch_m);
    }
    return 0;
  }
  if (options.images.empty()) {
    throw InputError("calibrate: expected a folder of images or a video file of the target "
                     "(or --print FILE.svg to draw the target)");
  }
  if (options.out_dir.empty()) throw InputError("calibrate: expected -o DIR, the output folder");
  const bool progress = ShowProgress(common);
  CollectOptions collect;
  collect.step = options.every;
  if (options.min_change_px >= 0) collect.min_change_px = options.min_change_px;
  const CollectedViews collected =
      CollectTargetViews(options.images, target, collect, [&](int done) {
        if (progress) std::cerr << fmt::format("\rsearching image {}", done) << std::flush;
      });
  if (progress) std::cerr << "\n";
  if (!common.quiet) {
    std::cout << fmt::format("The target was found in {} of {} {}",
                             collected.views.size() + collected.repeats.size(),
                             collected.images_read, collected.from_clip ? "frames" : "images");
    if (!collected.missed.empty()) {
      std::cout << " (not in: ";
      for (size_t i = 0; i < collected.missed.size() && i < 20; ++i) {
        std::cout << (i ? ", " : "") << collected.missed[i];
      }
      std::cout << (collected.missed.size() > 20 ? ", ..." : "") << ")";
    }
    std::cout << ".\n";
    if (!collected.repeats.empty()) {
      std::cout << fmt::format("{} of them repeat a pose already kept (features within {:.1f} px "
                               "rms) and were skipped; {} views remain.\n",
                               collected.repeats.size(), collected.min_change_px,
                               collected.views.size());
    }
  }
  CalibrationOptions calibration_options;
  calibration_options.estimate_k3 = options.estimate_k3;
  calibration_options.estimate_tangential = !options.no_tangential;
  const CameraCalibration calibration = CalibrateCamera(collected.views, target, calibration_options);
  std::filesystem::create_directories(options.out_dir);
  Camera camera;
  camera.intrinsics = calibration.intrinsics;
  const double* sigma = calibration.sigma_fx_fy_cx_cy_px.data();
  WriteCameraYaml(camera, options.out_dir / "camera.yaml",
                  fmt::format("Calibrated by tumbletrace calibrate from {} views of {} (rms {:.3f} px "
                              "per coordinate).\n1-sigma: fx {:.3f}, fy {:.3f}, cx {:.3f}, cy "
                              "{:.3f} px; those of the distortion in calibration.json{}.",
                              calibration.views_used, options.images.filename().string(),
                              calibration.rms_px, sigma[0], sigma[1], sigma[2], sigma[3],
                              calibration.weak ? "; WEAK: see calibration.json" : ""));
  WriteCalibrationJson(calibration, target, options.out_dir / "calibration.json");
  if (!common.quiet) {
    std::cout << CalibrationText(calibration, target);
    std::cout << fmt::format("Wrote {} and {}.\n", (options.out_dir / "camera.yaml").string(),
                             (options.out_dir / "calibration.json").string());
  } else {
    for (const std::string& w : calibration.warnings) std::cerr << "warning: " << w << "\n";
    for (const std::string& r : calibration.weak_reasons) std::cerr << "WEAK calibration: " << r << "\n";
  }
  return 0;
}

int RunLocate(const LocateOptions& options, const CommonOptions& common) {
  Camera camera = ReadCameraYaml(options.camera);
  const bool from_target = !options.image.empty();
  if (from_target == !options.points.empty()) {
    throw InputError("locate: expected either --image with --target and --down (the target "
                     "placed in the throw region) or --points (surveyed points), not both");
  }
  std::vector<PointCorrespondence> points;
  std::string source;
  if (from_target) {
    if (options.target.empty() || options.down.empty()) {
      throw InputError("locate: --image needs --target (the target file) and --down (gravity's "
                       "direction in the target frame, e.g. +y for a board hanging upright)");
    }
    const CalibrationTarget target = ReadTargetYaml(options.target);
    const Eigen::Vector3d down = ParseDirection(options.down, "--down");
    const cv::Mat image = cv::imread(options.image.string(), cv::IMREAD_UNCHANGED);
    if (image.empty()) {
      throw InputError(fmt::format("{}: expected an image file (png, tif, jpg) that can be read",
                                   options.image.string()));
    }
    const CameraIntrinsics& k = camera.intrinsics;
    if (image.cols != k.width_px || image.rows != k.height_px) {
      throw InputError(fmt::format("{}: the image is {} x {} px; expected the {} x {} px the "
                                   "camera file {} describes",
                                   options.image.string(), image.cols, image.rows, k.width_px,
                                   k.height_px, options.camera.string()));
    }
    const std::optional<TargetView> view = DetectTarget(image, target, options.image.string());
    if (!view) {
      throw DataError(fmt::format("the {} target of {} was not found in {}",
                                  TargetKindName(target.kind), options.target.string(),
                                  options.image.string()));
    }
    // The world's origin at the target's first feature, whatever the kind (a ChArUco
    // board's frame has its origin at the outer corner of the first square).
    RigidTransform world_from_target = WorldFromTarget(down);
    world_from_target.translation_m = -(world_from_target.rotation * target.FeaturePoints().front());
    points = TargetCorrespondences(*view, target, world_from_target);
    source = fmt::format("{} target ({}) in {}; gravity along {} of the target frame",
                         TargetKindName(target.kind), options.target.string(),
                         options.image.string(), options.down);
    if (!common.quiet) {
      std::cout << fmt::format(
          "Target found: {} features; the world origin (feature {}) is at pixel [{:.1f}, "
          "{:.1f}], z up.\n",
          view->ids.size(), view->ids.front(), view->pixels.front().x(), view->pixels.front().y());
    }
  } else {
    points = ReadSurveyPoints(options.points);
    source = fmt::format("surveyed points in {}", options.points.string());
  }
  const CameraPose pose = LocateCamera(points, camera.intrinsics);
  std::filesystem::create_directories(options.out_dir);
  RefuseOverwrite(options.out_dir / "camera.yaml", options.camera);
  camera.camera_from_world = pose.camera_from_world;
  WriteCameraYaml(
      camera, options.out_dir / "camera.yaml",
      fmt::format("Intrinsics from {}; world_to_camera by tumbletrace locate from {}.\n1-sigma of "
                  "the pose: rotation {:.3f}, {:.3f}, {:.3f} deg about the camera's x, y, z; "
                  "translation {:.2f}, {:.2f}, {:.2f} mm;\nthe world's vertical {:.3f} deg "
                  "(covariance in pose.json).",
                  options.camera.string(), source, pose.sigma_rotation_deg.x(),
                  pose.sigma_rotation_deg.y(), pose.sigma_rotation_deg.z(),
                  pose.sigma_translation_mm.x(), pose.sigma_translation_mm.y(),
                  pose.sigma_translation_mm.z(), pose.sigma_vertical_deg));
  WritePoseJson(pose, source, options.out_dir / "pose.json");
  if (!common.quiet) {
    std::cout << PoseText(pose);
    std::cout << fmt::format("Wrote {} (the intrinsics of {} with world_to_camera) and {}.\n",
                             (options.out_dir / "camera.yaml").string(), options.camera.string(),
                             (options.out_dir / "pose.json").string());
  }
  return 0;
}

}  // namespace tumbletrace::cli
