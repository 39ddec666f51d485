#include "tumbletrace/report/results.hpp"

#include <fmt/format.h>

#include <cmath>
#include <limits>
#include <map>
#include <sstream>

#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/sha256.hpp"

namespace tumbletrace {
namespace {

using nlohmann::json;

json Maybe(const std::optional<double>& v) { return v ? json(*v) : json(nullptr); }

json Vec(const Eigen::Vector3d& v) { return {v.x(), v.y(), v.z()}; }

json Vec(const MaybeVector3& v) { return {Maybe(v[0]), Maybe(v[1]), Maybe(v[2])}; }

// The smallest and largest per-series noise level, px.
std::pair<double, double> SeriesSigmaRange(const NoiseModel& noise) {
  double low = std::numeric_limits<double>::infinity(), high = 0.0;
  for (const SeriesNoise& series : noise.series) {
    low = std::min(low, std::sqrt(series.variance_px2));
    high = std::max(high, std::sqrt(series.variance_px2));
  }
  return {noise.series.empty() ? 0.0 : low, high};
}

// What the reported sigmas cover, in words (the text summary and report.html say it).
std::string NoiseModelSentence(const FitResult& fit, const FlightSummary& s) {
  const auto [low, high] = SeriesSigmaRange(fit.noise);
  std::string factors;
  const char* axes = "xyz";
  for (int i = 0; i < 3; ++i) {
    if (!s.cm_sigma_m[i]) continue;
    factors += fmt::format("{}{} {:.2f}", factors.empty() ? "" : ", ", axes[i],
                           fit.variance_factor_cm[i]);
  }
  return fmt::format(
      "The sigmas allow for errors that differ in level from marker to marker and are "
      "correlated from frame to frame: each of the {} residual series (camera x marker x "
      "image coordinate) has its own noise level ({:.3f}-{:.3f} px) and lag-1 correlation "
      "(median {:.2f}, largest {:.2f}), an AR(1) model, and each carries an offset that lasts "
      "through the flight (1-sigma {:.3f} px: a marker's shading, blur and place in the field, "
      "which the fit partly absorbs and the residuals cannot show; at least the session's "
      "markers.centre_offset_px), entering a sandwich covariance. Against independent errors "
      "of one level, the CM's variances are {} times as large ({}).",
      fit.noise.series.size(), low, high, fit.noise.median_rho, fit.noise.max_rho,
      std::sqrt(fit.noise.offset_variance_px2), factors.empty() ? "-" : "these",
      factors.empty() ? "no CM component determined" : factors);
}

json NoiseModelJson(const FitResult& fit, const FlightSummary& s) {
  json factors = json::array();
  for (int i = 0; i < 3; ++i) {
    factors.push_back(s.cm_sigma_m[i] ? json(fit.variance_factor_cm[i]) : json(nullptr));
  }
  const auto [low, high] = SeriesSigmaRange(fit.noise);
  return {{"kind", "ar1-sandwich"},
          {"variance_factor_cm", factors},
          {"series", fit.noise.series.size()},
          {"median_rho", fit.noise.median_rho},
          {"max_rho", fit.noise.max_rho},
          {"pooled_rho", fit.noise.pooled_rho},
          {"sigma_px_range", {low, high}},
          {"offset_sigma_px", std::sqrt(fit.noise.offset_variance_px2)},
          {"sentence", NoiseModelSentence(fit, s)}};
}

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

json WindowEndJson(const WindowEnd& end, bool detected) {
  return {{"frame", end.frame},
          {"sigma_frames", detected && !end.clip_edge ? json(end.sigma_frames) : json(nullptr)},
          {"clip_edge", end.clip_edge},
          {"velocity_jump", detected && !end.clip_edge ? json(end.velocity_jump) : json(nullptr)},
          {"sentence", end.sentence}};
}

json DragJson(const DragSummary& d) {
  return {{"model", TranslationModelName(d.model)},
          {"reason", d.reason},
          {"k_per_m", Maybe(d.k_per_m)},
          {"sigma_k_per_m", Maybe(d.sigma_k_per_m)},
          {"k_lift", Maybe(d.k_lift)},
          {"sigma_k_lift", Maybe(d.sigma_k_lift)},
          {"cd", Maybe(d.cd)},
          {"sigma_cd", Maybe(d.sigma_cd)},
          {"cl_at_launch", Maybe(d.cl_at_launch)},
          {"sigma_cl_at_launch", Maybe(d.sigma_cl_at_launch)},
          {"reynolds_at_launch", Maybe(d.reynolds_at_launch)},
          {"spin_ratio_at_launch", Maybe(d.spin_ratio_at_launch)},
          {"air_density_kgpm3", d.air_density_kgpm3},
          {"air_viscosity_pas", d.air_viscosity_pas},
          {"air", d.air},
          {"wind_world_mps", Vec(d.wind_world_mps)},
          {"notes", d.notes}};
}

}  // namespace

json ResultsJson(const FitResult& fit, const FlightSummary& s, const Provenance& provenance,
                 const Diagnostics& diagnostics) {
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
  {
    const FreeFlightWindow& w = diagnostics.window;
    j["window"] = {{"first_frame", fit.first_frame},
                   {"last_frame", fit.last_frame},
                   {"frames_used", fit.frames_used},
                   {"detected", w.detected},
                   {"criterion", w.criterion},
                   {"start", WindowEndJson(w.start, w.detected)},
                   {"end", WindowEndJson(w.end, w.detected)},
                   {"search_fits", w.fits}};
  }
  {
    json trials = json::array();
    for (const FitResult::ModelTrial& t : fit.model_trials) {
      trials.push_back({{"model", RotationModelName(t.model)},
                        {"parameters", t.parameters},
                        {"sum_sq_px2", t.sum_sq_px2},
                        {"bic", t.bic},
                        {"converged", t.converged}});
    }
    json flips = json::array();
    for (double t : s.flip_times_s) flips.push_back(t);
    j["rotation"] = {{"model", RotationModelName(s.rotation_model)},
                     {"reason", s.rotation_reason},
                     {"criterion", fit.model_trials.empty() ? "asked for" : "BIC"},
                     {"models_tried", trials},
                     {"angular_momentum_world_unit", Vec(s.angular_momentum_world_unit)},
                     {"sigma_angular_momentum_deg", s.sigma_angular_momentum_deg},
                     {"flip_times_s", flips}};
  }
  {
    // Column k of axes_body is principal axis k (I1 <= I2 <= I3); a column the model leaves
    // open (the equal pair of a symmetric top) is null.
    json axes = nullptr, sigma_axes = nullptr;
    if (s.inertia_ratios) {
      axes = json::array();
      for (int row = 0; row < 3; ++row) {
        json r = json::array();
        for (int k = 0; k < 3; ++k) {
          r.push_back(s.inertia_axes_body[k] ? json((*s.inertia_axes_body[k])[row]) : json(nullptr));
        }
        axes.push_back(r);
      }
      sigma_axes = json::array();
      for (int k = 0; k < 3; ++k) sigma_axes.push_back(Maybe(s.inertia_sigma_axes_deg[k]));
    }
    j["inertia"] = {
        {"ratios", s.inertia_ratios ? json({(*s.inertia_ratios)[0], (*s.inertia_ratios)[1]}) : json(nullptr)},
        {"sigma_ratios", s.inertia_sigma_ratios
                             ? json({(*s.inertia_sigma_ratios)[0], (*s.inertia_sigma_ratios)[1]})
                             : json(nullptr)},
        {"axes_body", axes},
        {"sigma_axes_deg", sigma_axes},
        {"held_from_parts", s.inertia_held}};
  }
  j["energy"] = {{"translational_per_mass_jpkg", s.translational_energy_per_mass_jpkg},
                 {"rotational_per_mass_jpkg", Maybe(s.rotational_energy_per_mass_jpkg)},
                 {"translational_j", Maybe(s.translational_energy_j)},
                 {"rotational_j", Maybe(s.rotational_energy_j)},
                 {"rotational_source", s.rotational_energy_per_mass_jpkg
                                           ? "parts list inertia per unit mass"
                                           : "none: the flight gives the inertia's ratios, not "
                                             "its scale; add a parts list"}};
  {
    json cameras = json::array();
    for (size_t k = 0; k < s.rms_px_per_camera.size(); ++k) {
      cameras.push_back({{"index", k},
                         {"rms_px", s.rms_px_per_camera[k]},
                         {"time_offset_s", s.time_offsets_s[k]},
                         {"sigma_time_offset_s", s.sigma_time_offsets_s[k]}});
    }
    j["cameras"] = cameras;
  }
  {
    json drag = DragJson(s.drag);
    json trials = json::array();
    for (const FitResult::TranslationTrial& t : fit.translation_trials) {
      trials.push_back({{"model", TranslationModelName(t.model)},
                        {"parameters", t.parameters},
                        {"sum_sq_px2", t.sum_sq_px2},
                        {"bic", t.bic},
                        {"converged", t.converged}});
    }
    drag["criterion"] = fit.translation_trials.empty() ? "asked for" : "BIC";
    drag["models_tried"] = trials;
    j["drag"] = drag;
  }
  j["gravity"] = {{"world_mps2", Vec(s.gravity_world_mps2)},
                  {"estimated", s.sigma_gravity_mps2.has_value()},
                  {"sigma_mps2", s.sigma_gravity_mps2 ? Vec(*s.sigma_gravity_mps2) : json(nullptr)}};
  {
    const GravityCheck& g = diagnostics.gravity;
    j["gravity"]["check"] =
        g.performed ? json{{"expected_mps2", g.expected_mps2},
                           {"estimated_mps2", g.estimated_mps2},
                           {"sigma_mps2", g.sigma_mps2},
                           {"z", g.z},
                           {"ratio", g.ratio},
                           {"implied_capture_fps_factor", g.implied_capture_fps_factor},
                           {"flagged", g.flagged},
                           {"sentence", g.sentence}}
                    : json(nullptr);
  }
  {
    json markers = json::array();
    for (const MarkerDiagnostics& m : diagnostics.markers) {
      markers.push_back({{"marker", m.marker_id}, {"sightings", m.sightings},
                         {"outliers", m.outliers}, {"rms_px", m.rms_px}, {"max_px", m.max_px}});
    }
    json flags = json::array();
    for (const BreakFlag& f : diagnostics.flags) {
      flags.push_back({{"kind", f.kind},
                       {"first_frame", f.first_frame ? json(*f.first_frame) : json(nullptr)},
                       {"last_frame", f.last_frame ? json(*f.last_frame) : json(nullptr)},
                       {"sentence", f.sentence}});
    }
    const RunsTest& r = diagnostics.runs;
    j["diagnostics"] = {
        {"flags", flags},
        {"per_marker", markers},
        {"runs_test", {{"runs", r.runs},
                       {"expected_runs", r.expected_runs},
                       {"z", r.z},
                       {"lag1_autocorrelation", r.lag1_autocorrelation},
                       {"variance_factor", r.variance_factor},
                       {"white", r.white},
                       {"sentence", r.sentence}}},
        {"acceleration_smoothing_frames", diagnostics.acceleration_smoothing_frames}};
  }
  // The direction (held or estimated); its 1-sigma angle is 0 when held.
  j["gravity"]["direction_world"] = Vec(s.gravity_world_mps2.normalized());
  j["gravity"]["sigma_direction_deg"] = s.sigma_gravity_direction_deg.value_or(0.0);
  j["fit"] = {{"converged", fit.converged},
              {"rms_px", fit.rms_px},
              {"sigma_px", fit.sigma_px},
              {"observations", fit.observations},
              {"outliers", fit.outliers},
              {"degrees_of_freedom", fit.degrees_of_freedom},
              {"noise_model", NoiseModelJson(fit, s)},
              {"iterations", fit.iterations},
              {"model", std::string(s.drag.model == TranslationModel::kVacuum
                                        ? "ballistic"
                                        : s.drag.model == TranslationModel::kDrag
                                              ? "ballistic with quadratic drag"
                                              : "ballistic with quadratic drag and lift") +
                            " + " + RotationModelName(s.rotation_model)},
              {"t0_s", fit.parameters.t0_s},
              {"solve_s", fit.solve_seconds},
              {"termination", fit.termination}};
  j["warnings"] = fit.warnings;
  return j;
}

void AddReportKeys(json* results, const Body& body,
                   const std::vector<std::filesystem::path>& input_files) {
  json markers = json::array();
  for (const Marker& m : body.markers) markers.push_back({{"id", m.id}, {"at_m", Vec(m.at_body_m)}});
  json references = json::object();
  for (const auto& [name, at] : body.references_body_m) references[name] = Vec(at);
  (*results)["body"] = {{"markers", markers}, {"references_m", references}};
  json details = json::array();
  for (const std::filesystem::path& f : input_files) {
    if (std::filesystem::is_directory(f)) {
      std::uintmax_t bytes = 0;
      int files = 0;
      for (const auto& entry : std::filesystem::directory_iterator(f)) {
        if (!entry.is_regular_file()) continue;
        bytes += entry.file_size();
        ++files;
      }
      details.push_back({{"path", f.string()}, {"bytes", bytes}, {"sha256", nullptr},
                         {"note", fmt::format("a folder of {} files: no single digest", files)}});
    } else {
      details.push_back({{"path", f.string()},
                         {"bytes", std::filesystem::file_size(f)},
                         {"sha256", Sha256HexOfFile(f)}});
    }
  }
  (*results)["inputs"]["file_details"] = details;
}

void WriteResultsJson(const nlohmann::json& results, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) { out << results.dump(2) << "\n"; });
}

void WriteFramesCsv(const FitResult& fit, const FlightSummary& s,
                    const std::filesystem::path& path, const Diagnostics& diagnostics) {
  std::map<int, const FrameDiagnostics*> measured;
  for (const FrameDiagnostics& f : diagnostics.frames) measured[f.frame] = &f;
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
           "q_w,q_x,q_y,q_z,omega_x_radps,omega_y_radps,omega_z_radps,rms_px,markers,"
           "cm_measured_x_m,cm_measured_y_m,cm_measured_z_m,accel_residual_x_mps2,"
           "accel_residual_y_mps2,accel_residual_z_mps2\n";
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
          << ',' << n;
      // The frame's own CM and the acceleration residual against vacuum (empty where the
      // frame alone cannot give them).
      const auto m = measured.find(frame);
      for (int k = 0; k < 2; ++k) {
        const std::optional<Eigen::Vector3d> value =
            m == measured.end() ? std::nullopt
                                : (k == 0 ? m->second->cm_world_m : m->second->accel_residual_mps2);
        for (int i = 0; i < 3; ++i) {
          out << ',' << (value ? fmt::format("{:.9g}", (*value)[i]) : std::string());
        }
      }
      out << '\n';
    }
  });
}

void WriteResidualsCsv(const FitResult& fit, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << "frame,time_s,marker,x_px,y_px,residual_x_px,residual_y_px,outlier,camera\n";
    for (const ResidualRecord& r : fit.residuals) {
      out << fmt::format("{},{:.9g},{},{:.6f},{:.6f},{:.6f},{:.6f},{},{}\n", r.frame, r.time_s,
                         r.marker_id, r.observed_px.x(), r.observed_px.y(), r.residual_px.x(),
                         r.residual_px.y(), r.outlier ? 1 : 0, r.camera);
    }
  });
}

std::string SummaryText(const FitResult& fit, const FlightSummary& s,
                        const Diagnostics& diagnostics) {
  std::ostringstream out;
  const FreeFlightWindow& w = diagnostics.window;
  if (w.detected) {
    out << fmt::format("Free flight found in frames {}-{} ({} model fits):\n  {}\n  {}\n",
                       w.start.frame, w.end.frame, w.fits, w.start.sentence, w.end.sentence);
  }
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
  out << fmt::format("Rotation model: {} ({})\n", RotationModelName(s.rotation_model),
                     s.rotation_reason);
  if (s.inertia_ratios) {
    out << fmt::format("Principal moments: I1/I3 = {:.4f}{}, I2/I3 = {:.4f}{}{}\n",
                       (*s.inertia_ratios)[0],
                       s.inertia_sigma_ratios ? fmt::format(" +/- {:.4f}", (*s.inertia_sigma_ratios)[0]) : "",
                       (*s.inertia_ratios)[1],
                       s.inertia_sigma_ratios ? fmt::format(" +/- {:.4f}", (*s.inertia_sigma_ratios)[1]) : "",
                       s.inertia_held ? " (held from the parts list)" : "");
    for (int k = 0; k < 3; ++k) {
      if (!s.inertia_axes_body[k]) continue;
      const Eigen::Vector3d& a = *s.inertia_axes_body[k];
      out << fmt::format("  axis {} in the body: [{:.4f}, {:.4f}, {:.4f}]{}\n", k + 1, a.x(), a.y(),
                         a.z(),
                         s.inertia_sigma_axes_deg[k]
                             ? fmt::format(" +/- {:.3f} deg", *s.inertia_sigma_axes_deg[k])
                             : "");
    }
  }
  {
    const Eigen::Vector3d& l = s.angular_momentum_world_unit;
    out << fmt::format("Angular momentum along [{:.4f}, {:.4f}, {:.4f}] (world) +/- {:.3f} deg\n",
                       l.x(), l.y(), l.z(), s.sigma_angular_momentum_deg);
  }
  if (!s.flip_times_s.empty()) {
    out << "Flips at t =";
    for (double t : s.flip_times_s) out << fmt::format(" {:.4f}", t);
    out << " s\n";
  }
  out << fmt::format("Energy at launch: translational {:.3f} J/kg", s.translational_energy_per_mass_jpkg);
  if (s.rotational_energy_per_mass_jpkg) {
    out << fmt::format(", rotational {:.3f} J/kg (parts-list inertia)", *s.rotational_energy_per_mass_jpkg);
  }
  out << "\n";
  out << "Uncertainty: " << NoiseModelSentence(fit, s) << "\n";
  {
    const DragSummary& d = s.drag;
    if (d.model == TranslationModel::kVacuum) {
      out << fmt::format("Air: no drag{}\n", d.reason.empty() ? "" : " (" + d.reason + ")");
    } else {
      out << fmt::format("Air: {} model ({})\n  k = {:.5f} +/- {:.5f} 1/m", TranslationModelName(d.model),
                         d.reason, *d.k_per_m, *d.sigma_k_per_m);
      if (d.cd) out << fmt::format(", C_d = {:.3f} +/- {:.3f}", *d.cd, *d.sigma_cd);
      if (d.reynolds_at_launch) out << fmt::format(", Re = {:.3g} at launch", *d.reynolds_at_launch);
      out << "\n";
      if (d.k_lift) {
        out << fmt::format("  k_L = {:.5f} +/- {:.5f}", *d.k_lift, *d.sigma_k_lift);
        if (d.cl_at_launch) out << fmt::format(", C_L = {:.3f} +/- {:.3f} at launch", *d.cl_at_launch, *d.sigma_cl_at_launch);
        out << "\n";
      }
      out << "  air: " << d.air << "\n";
      for (const std::string& note : d.notes) out << "  " << note << "\n";
    }
  }
  // (a flagged check or test is among the warnings below)
  if (diagnostics.gravity.performed && !diagnostics.gravity.flagged) {
    out << "Gravity check: " << diagnostics.gravity.sentence << "\n";
  }
  if (!diagnostics.markers.empty() && diagnostics.runs.white) {
    out << "Residuals: " << diagnostics.runs.sentence << "\n";
  }
  if (s.rms_px_per_camera.size() > 1) {
    for (size_t k = 0; k < s.rms_px_per_camera.size(); ++k) {
      out << fmt::format("Camera {}: rms {:.3f} px, clock offset {:.3f} ms", k,
                         s.rms_px_per_camera[k], 1e3 * s.time_offsets_s[k]);
      if (s.sigma_time_offsets_s[k] > 0) {
        out << fmt::format(" +/- {:.4f} ms", 1e3 * s.sigma_time_offsets_s[k]);
      }
      out << "\n";
    }
  }
  for (const std::string& w : fit.warnings) out << "warning: " << w << "\n";
  return out.str();
}

}  // namespace tumbletrace
