#include "tumbletrace/calibrate/reports.hpp"

#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>

#include "tumbletrace/core/atomic_file.hpp"

namespace tumbletrace {
namespace {

using json = nlohmann::json;

json Vec(const Eigen::Vector3d& v) { return json::array({v.x(), v.y(), v.z()}); }

json Matrix(const Eigen::MatrixXd& m) {
  json rows = json::array();
  for (int r = 0; r < m.rows(); ++r) {
    json row = json::array();
    for (int c = 0; c < m.cols(); ++c) row.push_back(m(r, c));
    rows.push_back(row);
  }
  return rows;
}

void Write(const json& j, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) { out << j.dump(2) << "\n"; });
}

}  // namespace

void WriteCalibrationJson(const CameraCalibration& c, const CalibrationTarget& target,
                          const std::filesystem::path& path) {
  const CameraIntrinsics& k = c.intrinsics;
  json j;
  j["target"] = {{"kind", TargetKindName(target.kind)},
                 {"columns", target.columns},
                 {"rows", target.rows},
                 {"pitch_m", target.pitch_m}};
  j["image_size"] = {k.width_px, k.height_px};
  j["fx"] = k.fx_px;
  j["fy"] = k.fy_px;
  j["cx"] = k.cx_px;
  j["cy"] = k.cy_px;
  j["distortion"] = k.distortion;
  j["sigma"] = {{"fx", c.sigma_fx_fy_cx_cy_px[0]},
                {"fy", c.sigma_fx_fy_cx_cy_px[1]},
                {"cx", c.sigma_fx_fy_cx_cy_px[2]},
                {"cy", c.sigma_fx_fy_cx_cy_px[3]}};
  json sigma_distortion = json::array();
  for (const auto& s : c.sigma_distortion) sigma_distortion.push_back(s ? json(*s) : json(nullptr));
  j["sigma"]["distortion"] = sigma_distortion;
  j["rms_px"] = c.rms_px;
  j["views_used"] = c.views_used;
  j["outlier_criterion"] = c.outlier_criterion;
  json views = json::array();
  for (const CalibrationView& v : c.views) {
    views.push_back({{"name", v.name},
                     {"points", v.points},
                     {"rms_px", v.rms_px},
                     {"tilt_deg", v.tilt_deg},
                     {"outlier", v.outlier}});
  }
  j["views"] = views;
  j["coverage"] = {{"columns", c.coverage.columns},
                   {"rows", c.coverage.rows},
                   {"map", c.coverage.Lines()},
                   {"touched_fraction", c.coverage.TouchedFraction()},
                   {"corners_touched", c.coverage.CornersTouched()}};
  j["orientation"] = {{"max_tilt_deg", c.max_tilt_deg},
                      {"normal_spread_deg", c.normal_spread_deg}};
  j["weak"] = c.weak;
  j["weak_reasons"] = c.weak_reasons;
  j["warnings"] = c.warnings;
  Write(j, path);
}

void WritePoseJson(const CameraPose& pose, const std::string& source,
                   const std::filesystem::path& path) {
  json j;
  j["source"] = source;
  j["world_to_camera"] = {{"rotation", Matrix(pose.camera_from_world.rotation)},
                          {"translation_m", Vec(pose.camera_from_world.translation_m)}};
  j["sigma_rotation_deg"] = Vec(pose.sigma_rotation_deg);
  j["sigma_translation_mm"] = Vec(pose.sigma_translation_mm);
  j["covariance"] = Matrix(pose.covariance);
  j["covariance_order"] =
      "rotation about camera x, y, z (rad, applied on the left), translation x, y, z (m)";
  j["camera_centre_world_m"] = Vec(pose.camera_centre_world_m);
  j["sigma_camera_centre_mm"] = Vec(pose.sigma_camera_centre_mm);
  j["sigma_vertical_deg"] = pose.sigma_vertical_deg;
  j["rms_px"] = pose.rms_px;
  j["points"] = pose.points;
  Write(j, path);
}

std::string CalibrationText(const CameraCalibration& c, const CalibrationTarget& target) {
  const CameraIntrinsics& k = c.intrinsics;
  std::string out = fmt::format(
      "Calibration of a {} x {} px camera from {} views of a {} target ({} x {}, pitch {:g} mm):\n",
      k.width_px, k.height_px, c.views_used, TargetKindName(target.kind), target.columns,
      target.rows, 1e3 * target.pitch_m);
  const char* names[4] = {"fx", "fy", "cx", "cy"};
  const double values[4] = {k.fx_px, k.fy_px, k.cx_px, k.cy_px};
  for (int i = 0; i < 4; ++i) {
    out += fmt::format("  {} = {:.3f} px  (1-sigma {:.3f} px)\n", names[i], values[i],
                       c.sigma_fx_fy_cx_cy_px[i]);
  }
  const char* terms[5] = {"k1", "k2", "p1", "p2", "k3"};
  for (int i = 0; i < 5; ++i) {
    if (c.sigma_distortion[i]) {
      out += fmt::format("  {} = {:.6f}  (1-sigma {:.6f}, dimensionless)\n", terms[i],
                         k.distortion[i], *c.sigma_distortion[i]);
    } else {
      out += fmt::format("  {} = {:g}  (held, not estimated)\n", terms[i], k.distortion[i]);
    }
  }
  out += fmt::format("  reprojection rms {:.4f} px per coordinate over the views used\n", c.rms_px);
  out += "Per view (rms px per coordinate, tilt of the board from head-on):\n";
  for (const CalibrationView& v : c.views) {
    out += fmt::format("  {:<14} {:4d} points  rms {:.4f} px  tilt {:5.1f} deg{}\n", v.name,
                       v.points, v.rms_px, v.tilt_deg, v.outlier ? "  OUTLIER, left out" : "");
  }
  out += fmt::format("Outliers: {}.\n", c.outlier_criterion);
  out += fmt::format("Coverage of the image ({} x {} cells, # = features seen there): {:.0f} %\n",
                     c.coverage.columns, c.coverage.rows, 100 * c.coverage.TouchedFraction());
  for (const std::string& line : c.coverage.Lines()) out += "  " + line + "\n";
  out += fmt::format("Orientations: largest tilt {:.1f} deg, largest angle between two boards "
                     "{:.1f} deg\n",
                     c.max_tilt_deg, c.normal_spread_deg);
  for (const std::string& w : c.warnings) out += "warning: " + w + "\n";
  if (c.weak) {
    for (const std::string& r : c.weak_reasons) out += "WEAK calibration: " + r + "\n";
  }
  return out;
}

std::string PoseText(const CameraPose& pose) {
  const Eigen::Matrix3d& r = pose.camera_from_world.rotation;
  const Eigen::Vector3d& t = pose.camera_from_world.translation_m;
  const Eigen::Vector3d& c = pose.camera_centre_world_m;
  const Eigen::Vector3d axis = r.row(2).transpose();  // the optical axis in the world
  std::string out = fmt::format(
      "Camera pose from {} points, reprojection rms {:.3f} px per coordinate:\n"
      "  world_to_camera rotation rows [{:.6f}, {:.6f}, {:.6f}] [{:.6f}, {:.6f}, {:.6f}] "
      "[{:.6f}, {:.6f}, {:.6f}]\n"
      "  translation [{:.4f}, {:.4f}, {:.4f}] m\n"
      "  1-sigma: rotation about camera x, y, z {:.4f}, {:.4f}, {:.4f} deg; translation {:.2f}, "
      "{:.2f}, {:.2f} mm\n"
      "  camera centre in the world [{:.4f}, {:.4f}, {:.4f}] m (1-sigma {:.2f}, {:.2f}, {:.2f} "
      "mm), looking along [{:.3f}, {:.3f}, {:.3f}] ({:.1f} deg below the horizontal)\n",
      pose.points, pose.rms_px, r(0, 0), r(0, 1), r(0, 2), r(1, 0), r(1, 1), r(1, 2), r(2, 0),
      r(2, 1), r(2, 2), t.x(), t.y(), t.z(), pose.sigma_rotation_deg.x(),
      pose.sigma_rotation_deg.y(), pose.sigma_rotation_deg.z(), pose.sigma_translation_mm.x(),
      pose.sigma_translation_mm.y(), pose.sigma_translation_mm.z(), c.x(), c.y(), c.z(),
      pose.sigma_camera_centre_mm.x(), pose.sigma_camera_centre_mm.y(),
      pose.sigma_camera_centre_mm.z(), axis.x(), axis.y(), axis.z(),
      -std::asin(std::clamp(axis.z(), -1.0, 1.0)) * 180.0 / M_PI);
  out += fmt::format(
      "  the world's vertical to {:.3f} deg (1-sigma): directions measured in the world (the "
      "launch angle, gravity's direction) carry it. When that is coarser than you need, give "
      "gravity as a magnitude in the session (gravity_mps2: 9.81): the fit then measures the "
      "vertical from the flight itself, in this pose's frame, with its uncertainty.\n",
      pose.sigma_vertical_deg);
  return out;
}

}  // namespace tumbletrace
