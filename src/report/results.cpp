#include "tumbletrace/report/results.hpp"

#include <fmt/format.h>

#include <cmath>
#include <map>
#include <sstream>

#include "tumbletrace/core/atomic_file.hpp"

namespace tumbletrace {
namespace {

using nlohmann::json;

json Maybe(const std::optional<double>& v) { return v ? json(*v) : json(nullptr); }

json Vec(const Eigen::Vector3d& v) { return {v.x(), v.y(), v.z()}; }

json Vec(const MaybeVector3& v) { return {Maybe(v[0]), Maybe(v[1]), Maybe(v[2])}; }

json Interval95(const MaybeVector3& value, const MaybeVector3& sigma) {
  json out = json::array();
  for (int i = 0; i < 3; ++i) {
    if (value[i] && sigma[i]) {
      out.push_back({*value[i] - kZ95 * *sigma[i], *value[i] + kZ95 * *sigma[i]});
    } else {
      out.push_back(nullptr);
    }
  }
  return out;
}

json Interval95(const Eigen::Vector3d& value, const Eigen::Vector3d& sigma) {
  json out = json::array();
  for (int i = 0; i < 3; ++i) out.push_back({value[i] - kZ95 * sigma[i], value[i] + kZ95 * sigma[i]});
  return out;
}

std::string Num(const std::optional<double>& v, double scale, int decimals) {
  return v ? fmt::format("{:.{}f}", *v * scale, decimals) : std::string("undetermined");
}

}  // namespace

json ResultsJson(const FitResult& fit, const FlightSummary& s, const Provenance& provenance) {
  json j;
  j["tool"] = {{"name", "tumbletrace"}, {"version", provenance.tool_version}};
  json inputs = json::array();
  for (const auto& f : provenance.input_files) inputs.push_back(f.string());
  j["inputs"] = {{"command", provenance.command}, {"files", inputs},
                 {"capture_fps", provenance.capture_fps}};

  json cm;
  cm["body_m"] = Vec(s.cm_body_m);
  cm["sigma_m"] = Vec(s.cm_sigma_m);
  json cov = json::array();
  for (int i = 0; i < 3; ++i) {
    cov.push_back({Maybe(s.cm_covariance_m2[i][0]), Maybe(s.cm_covariance_m2[i][1]),
                   Maybe(s.cm_covariance_m2[i][2])});
  }
  cm["covariance_m2"] = cov;
  cm["interval95_m"] = Interval95(s.cm_body_m, s.cm_sigma_m);
  json null_dirs = json::array();
  for (const auto& u : s.cm_unobservable_body) null_dirs.push_back(Vec(u));
  cm["unobservable_body"] = null_dirs;
  cm["line_point_body_m"] = Vec(s.cm_line_point_body_m);
  json refs = json::object();
  for (const auto& [name, r] : s.cm_from_references) {
    refs[name] = {{"vector_m", Vec(r.vector_m)}, {"distance_m", Maybe(r.distance_m)},
                  {"sigma_distance_m", Maybe(r.sigma_distance_m)}};
  }
  cm["from_references"] = refs;
  cm["design_body_m"] = s.design_cm_body_m ? Vec(*s.design_cm_body_m) : json(nullptr);
  cm["design_mass_kg"] = Maybe(s.design_mass_kg);
  j["cm"] = cm;

  j["launch"] = {
      {"frame", s.launch_frame},
      {"time_s", s.launch_time_s},
      {"position_m", Vec(s.launch_position_m)},
      {"velocity_mps", Vec(s.launch_velocity_mps)},
      {"sigma_velocity_mps", Vec(s.launch_sigma_velocity_mps)},
      {"interval95_velocity_mps", Interval95(s.launch_velocity_mps, s.launch_sigma_velocity_mps)},
      {"speed_mps", s.launch_speed_mps},
      {"sigma_speed_mps", s.launch_sigma_speed_mps},
      {"angle_deg", s.launch_angle_deg},
      {"sigma_angle_deg", s.launch_sigma_angle_deg}};
  j["spin"] = {
      {"omega_world_radps", Vec(s.omega_world_radps)},
      {"sigma_omega_world_radps", Vec(s.sigma_omega_world_radps)},
      {"omega_body_radps", Vec(s.omega_body_radps)},
      {"rate_rev_per_s", s.rate_rev_per_s},
      {"sigma_rate_rev_per_s", s.sigma_rate_rev_per_s},
      {"interval95_rate_rev_per_s", {s.rate_rev_per_s - kZ95 * s.sigma_rate_rev_per_s,
                                     s.rate_rev_per_s + kZ95 * s.sigma_rate_rev_per_s}},
      {"rate_rpm", 60.0 * s.rate_rev_per_s}};
  j["window"] = {{"first_frame", fit.first_frame}, {"last_frame", fit.last_frame},
                 {"frames_used", fit.frames_used}};
  j["rotation"] = {{"model", "constant-spin"}};
  j["inertia"] = {{"ratios", nullptr}, {"sigma_ratios", nullptr}, {"axes_body", nullptr}};
  j["drag"] = {{"model", "none"}, {"k_per_m", nullptr}, {"sigma_k_per_m", nullptr}};
  j["gravity"] = {{"world_mps2", Vec(s.gravity_world_mps2)},
                  {"estimated", s.sigma_gravity_mps2.has_value()},
                  {"sigma_mps2", s.sigma_gravity_mps2 ? Vec(*s.sigma_gravity_mps2) : json(nullptr)}};
  j["fit"] = {{"converged", fit.converged},
              {"rms_px", fit.rms_px},
              {"sigma_px", fit.sigma_px},
              {"observations", fit.observations},
              {"outliers", fit.outliers},
              {"degrees_of_freedom", fit.degrees_of_freedom},
              {"iterations", fit.iterations},
              {"model", "ballistic + constant-spin"},
              {"t0_s", fit.parameters.t0_s},
              {"solve_s", fit.solve_seconds},
              {"termination", fit.termination}};
  j["warnings"] = fit.warnings;
  return j;
}

void WriteResultsJson(const nlohmann::json& results, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) { out << results.dump(2) << "\n"; });
}

void WriteFramesCsv(const FitResult& fit, const FlightSummary& s,
                    const std::filesystem::path& path) {
  // Per-frame rms of the inlier residuals, and the frames' times.
  std::map<int, std::pair<double, int>> sum_sq;
  std::map<int, double> times;
  for (const ResidualRecord& r : fit.residuals) {
    times[r.frame] = r.time_s;
    if (r.outlier) continue;
    sum_sq[r.frame].first += r.residual_px.squaredNorm();
    sum_sq[r.frame].second += 1;
  }
  const FlightParameters& p = fit.parameters;
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << "frame,time_s,cm_x_m,cm_y_m,cm_z_m,v_x_mps,v_y_mps,v_z_mps,"
           "q_w,q_x,q_y,q_z,omega_x_radps,omega_y_radps,omega_z_radps,rms_px,markers\n";
    for (const auto& [frame, t] : times) {
      const Eigen::Vector3d r = p.PositionAt(t), v = p.VelocityAt(t), w = p.OmegaWorldAt(t);
      const Eigen::Matrix3d rot = p.WorldFromBodyAt(t);
      const Eigen::Quaterniond q(rot);
      out << frame << ',' << fmt::format("{:.9g}", t);
      // The CM's world position is left empty along directions the data do not fix.
      for (int i = 0; i < 3; ++i) {
        std::vector<Eigen::Vector3d> null_world;
        for (const auto& u : s.cm_unobservable_body) null_world.push_back(rot * u);
        const bool open = AxisUndetermined(Eigen::Vector3d::Unit(i), null_world);
        out << ',' << (open ? std::string() : fmt::format("{:.9f}", r[i]));
      }
      out << fmt::format(",{:.9f},{:.9f},{:.9f}", v.x(), v.y(), v.z());
      out << fmt::format(",{:.12f},{:.12f},{:.12f},{:.12f}", q.w(), q.x(), q.y(), q.z());
      out << fmt::format(",{:.9f},{:.9f},{:.9f}", w.x(), w.y(), w.z());
      const auto it = sum_sq.find(frame);
      const int n = it == sum_sq.end() ? 0 : it->second.second;
      out << ',' << (n > 0 ? fmt::format("{:.6f}", std::sqrt(it->second.first / (2.0 * n)))
                           : std::string())
          << ',' << n << '\n';
    }
  });
}

void WriteResidualsCsv(const FitResult& fit, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << "frame,time_s,marker,x_px,y_px,residual_x_px,residual_y_px,outlier\n";
    for (const ResidualRecord& r : fit.residuals) {
      out << fmt::format("{},{:.9g},{},{:.6f},{:.6f},{:.6f},{:.6f},{}\n", r.frame, r.time_s,
                         r.marker_id, r.observed_px.x(), r.observed_px.y(), r.residual_px.x(),
                         r.residual_px.y(), r.outlier ? 1 : 0);
    }
  });
}

std::string SummaryText(const FitResult& fit, const FlightSummary& s) {
  std::ostringstream out;
  out << fmt::format("Free-flight fit of frames {}-{} ({} frames, {} sightings, {} outliers): "
                     "rms {:.3f} px, {}\n",
                     fit.first_frame, fit.last_frame, fit.frames_used, fit.observations,
                     fit.outliers, fit.rms_px, fit.converged ? "converged" : "NOT converged");
  out << "CM in the body frame (mm, +/- 1 sigma):\n";
  const char* axes = "xyz";
  for (int i = 0; i < 3; ++i) {
    if (s.cm_body_m[i] && s.cm_sigma_m[i]) {
      out << fmt::format("  {}: {:>9} +/- {} mm\n", axes[i], Num(s.cm_body_m[i], 1e3, 3),
                         Num(s.cm_sigma_m[i], 1e3, 3));
    } else {
      out << fmt::format("  {}: undetermined by this throw (see the warning)\n", axes[i]);
    }
  }
  if (s.design_cm_body_m) {
    const Eigen::Vector3d& d = *s.design_cm_body_m;
    out << fmt::format("  design CM from the parts list: [{:.2f}, {:.2f}, {:.2f}] mm\n",
                       1e3 * d.x(), 1e3 * d.y(), 1e3 * d.z());
  }
  for (const auto& [name, r] : s.cm_from_references) {
    if (r.distance_m) {
      out << fmt::format("  from '{}': {:.2f} +/- {:.2f} mm\n", name, 1e3 * *r.distance_m,
                         1e3 * r.sigma_distance_m.value_or(0.0));
    }
  }
  out << fmt::format("Launch (frame {}, t = {:.4f} s): speed {:.4f} +/- {:.4f} m/s at {:.3f} "
                     "+/- {:.3f} deg above horizontal\n",
                     s.launch_frame, s.launch_time_s, s.launch_speed_mps,
                     s.launch_sigma_speed_mps, s.launch_angle_deg, s.launch_sigma_angle_deg);
  out << fmt::format("Spin: {:.4f} +/- {:.4f} rev/s ({:.1f} rpm)\n", s.rate_rev_per_s,
                     s.sigma_rate_rev_per_s, 60.0 * s.rate_rev_per_s);
  for (const std::string& w : fit.warnings) out << "warning: " << w << "\n";
  return out.str();
}

}  // namespace tumbletrace
