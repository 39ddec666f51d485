#include "tumbletrace/sim/target_views.hpp"

#include <fmt/format.h>

#include <nlohmann/json.hpp>
#include <opencv2/imgcodecs.hpp>
#include <random>

#include "tumbletrace/clip/video_writer.hpp"
#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/yaml_reader.hpp"
#include "tumbletrace/sim/board_poses.hpp"
#include "tumbletrace/sim/render_board.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

nlohmann::json Rows(const Eigen::Matrix3d& m) {
  nlohmann::json rows = nlohmann::json::array();
  for (int i = 0; i < 3; ++i) rows.push_back({m(i, 0), m(i, 1), m(i, 2)});
  return rows;
}

nlohmann::json Vec(const Eigen::Vector3d& v) { return {v.x(), v.y(), v.z()}; }

}  // namespace

bool IsTargetViewsScenario(const fs::path& path) {
  YamlMap map = YamlMap::LoadFile(path);
  return map.Has("kind") && map.String("kind") == "target-views";
}

TargetViewsScenario ReadTargetViewsScenario(const fs::path& path) {
  YamlMap map = YamlMap::LoadFile(path);
  const fs::path folder = path.parent_path();
  if (map.String("kind", "\"target-views\"") != "target-views") {
    map.Fail("kind", "\"target-views\" (a camera set-up scenario)");
  }
  TargetViewsScenario s;
  s.camera = ReadCameraYaml(folder / map.String("camera", "a camera file, relative to this file"));
  s.target = ReadTargetYaml(folder / map.String("target", "a target file, relative to this file"));
  s.views = map.OptionalInteger("views", "a whole number of target poses").value_or(s.views);
  if (s.views < 3) map.Fail("views", "at least 3 target poses");
  s.hold_frames = map.OptionalInteger("hold_frames", "a whole number of frames per pose")
                      .value_or(s.hold_frames);
  if (s.hold_frames < 1) map.Fail("hold_frames", "at least 1 frame per pose");
  if (map.Has("tilt_deg")) {
    const std::vector<double> tilt = map.Numbers("tilt_deg", 2, "[min, max] in degrees");
    if (!(tilt[0] >= 0 && tilt[1] >= tilt[0] && tilt[1] < 80)) {
      map.Fail("tilt_deg", "0 <= min <= max < 80 degrees");
    }
    s.min_tilt_deg = tilt[0];
    s.max_tilt_deg = tilt[1];
  }
  s.aim_span = map.OptionalNumber("aim_span", "a fraction of the image, 0-0.7").value_or(s.aim_span);
  if (!(s.aim_span >= 0 && s.aim_span <= 0.7)) map.Fail("aim_span", "a fraction of the image, 0-0.7");
  s.playback_fps = map.OptionalNumber("playback_fps", "frames per second").value_or(s.playback_fps);
  if (!(s.playback_fps > 0)) map.Fail("playback_fps", "a rate above 0 frames per second");
  s.supersampling = map.OptionalInteger("supersampling", "samples per pixel and axis, 1-8")
                        .value_or(s.supersampling);
  if (s.supersampling < 1 || s.supersampling > 8) map.Fail("supersampling", "1-8 samples per axis");
  if (map.Has("noise")) {
    YamlMap noise = map.Map("noise");
    s.image_noise_levels = noise.OptionalNumber("image_sigma_levels", "grey levels")
                               .value_or(s.image_noise_levels);
    if (!(s.image_noise_levels >= 0)) noise.Fail("image_sigma_levels", "grey levels >= 0");
    s.seed = static_cast<std::uint64_t>(noise.OptionalInteger("seed").value_or(1));
    noise.Finish();
  }
  if (map.Has("placed")) {
    YamlMap placed = map.Map("placed");
    PlacedTarget p;
    p.target = ReadTargetYaml(folder / placed.String("target", "a target file, relative to this file"));
    YamlMap pose = placed.Map("world_from_target");
    p.world_from_target.rotation = pose.Matrix3("rotation");
    p.world_from_target.translation_m = pose.Vector3("translation_m", "[x, y, z] in metres");
    const Eigen::Matrix3d& r = p.world_from_target.rotation;
    if (!((r.transpose() * r - Eigen::Matrix3d::Identity()).norm() < 1e-6 && r.determinant() > 0)) {
      pose.Fail("rotation", "a rotation matrix (orthonormal rows, determinant +1)");
    }
    pose.Finish();
    placed.Finish();
    if (!s.camera.camera_from_world) {
      map.Fail("placed", "a camera file with world_to_camera, to place the target in its view");
    }
    s.placed = p;
  }
  map.Finish();
  return s;
}

TargetViewsOutput SimulateTargetViews(const TargetViewsScenario& s, const fs::path& out_dir,
                                      const std::function<void(int, int)>& progress) {
  const CameraIntrinsics& k = s.camera.intrinsics;
  fs::create_directories(out_dir);
  TargetViewsOutput out;
  const int total = s.views * s.hold_frames + (s.placed ? 1 : 0);
  std::mt19937_64 shake(s.seed);
  std::normal_distribution<double> wander(0.0, s.hand_shake_m);
  {
    VideoWriter writer(out_dir / "target_views.mp4", cv::Size(k.width_px, k.height_px),
                       s.playback_fps);
    const std::vector<std::vector<Eigen::Vector2d>> polygons = s.target.BlackPolygons();
    for (const RigidTransform& pose :
         BoardPoses(s.target, k, s.views, s.min_tilt_deg, s.max_tilt_deg, s.seed, s.aim_span)) {
      for (int h = 0; h < s.hold_frames; ++h) {
        RigidTransform held = pose;
        held.translation_m += Eigen::Vector3d(wander(shake), wander(shake), wander(shake));
        BoardImageSettings settings;
        settings.noise_sigma_levels = s.image_noise_levels;
        settings.supersampling = s.supersampling;
        settings.noise_seed = s.seed * 100003 + out.frames;
        writer.Write(RenderBoardImage(polygons, k, held, settings));
        ++out.frames;
        if (progress) progress(out.frames, total);
      }
    }
  }
  nlohmann::json truth;
  truth["camera"] = {{"image_size", {k.width_px, k.height_px}},
                     {"fx", k.fx_px},
                     {"fy", k.fy_px},
                     {"cx", k.cx_px},
                     {"cy", k.cy_px},
                     {"distortion", k.distortion}};
  truth["frames"] = out.frames;
  truth["views"] = s.views;
  if (s.placed) {
    const RigidTransform camera_from_target = {
        s.camera.camera_from_world->rotation * s.placed->world_from_target.rotation,
        s.camera.camera_from_world->Apply(s.placed->world_from_target.translation_m)};
    BoardImageSettings settings;
    settings.noise_sigma_levels = s.image_noise_levels;
    settings.supersampling = s.supersampling;
    settings.noise_seed = s.seed * 100003 + out.frames;
    const cv::Mat image = RenderBoardImage(s.placed->target.BlackPolygons(), k, camera_from_target,
                                           settings);
    if (!cv::imwrite((out_dir / "placed.png").string(), image)) {
      throw InputError(fmt::format("{}: could not be written", (out_dir / "placed.png").string()));
    }
    out.placed = true;
    if (progress) progress(total, total);
    truth["camera"]["world_to_camera"] = {
        {"rotation", Rows(s.camera.camera_from_world->rotation)},
        {"translation_m", Vec(s.camera.camera_from_world->translation_m)}};
    truth["placed"] = {{"world_from_target",
                        {{"rotation", Rows(s.placed->world_from_target.rotation)},
                         {"translation_m", Vec(s.placed->world_from_target.translation_m)}}}};
  }
  WriteFileAtomically(out_dir / "truth.json",
                      [&](std::ostream& stream) { stream << truth.dump(2) << "\n"; });
  return out;
}

}  // namespace tumbletrace
