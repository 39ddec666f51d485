#include "tumbletrace/diagnose/diagnostics.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <map>
#include <tuple>

namespace tumbletrace {
namespace {

// The CM's world position from one frame's sightings with the orientation and the CM in
// the body held at the fit's values: Gauss-Newton on r from the model's r(t).
std::optional<Eigen::Vector3d> FrameCm(const std::vector<const ResidualRecord*>& seen,
                                       const Eigen::Vector3d& r_model,
                                       const Eigen::Matrix3d& world_from_body,
                                       const Eigen::Vector3d& cm_body_m, const Body& body,
                                       const std::vector<Camera>& cameras) {
  if (seen.size() < 2) return std::nullopt;
  Eigen::Vector3d r = r_model;
  for (int iteration = 0; iteration < 3; ++iteration) {
    Eigen::Matrix3d normal = Eigen::Matrix3d::Zero();
    Eigen::Vector3d rhs = Eigen::Vector3d::Zero();
    for (const ResidualRecord* s : seen) {
      const Marker* m = body.FindMarker(s->marker_id);
      const Camera& camera = cameras[s->camera];
      const Eigen::Vector3d x = r + world_from_body * (m->at_body_m - cm_body_m);
      Eigen::Vector2d predicted;
      if (!ProjectWorldPoint(camera, x, &predicted)) return std::nullopt;
      Eigen::Matrix<double, 2, 3> j;
      const double h = 1e-6;
      for (int k = 0; k < 3; ++k) {
        Eigen::Vector2d up, down;
        if (!ProjectWorldPoint(camera, x + h * Eigen::Vector3d::Unit(k), &up) ||
            !ProjectWorldPoint(camera, x - h * Eigen::Vector3d::Unit(k), &down)) {
          return std::nullopt;
        }
        j.col(k) = (up - down) / (2 * h);
      }
      normal += j.transpose() * j;
      rhs += j.transpose() * (s->observed_px - predicted);
    }
    Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eig(normal);
    if (eig.eigenvalues().minCoeff() < 1e-9 * eig.eigenvalues().maxCoeff()) return std::nullopt;
    r += normal.ldlt().solve(rhs);
  }
  return r;
}

// The acceleration of a local quadratic least-squares fit, x(t) = a + b t + c t^2 / 2,
// to the points (Savitzky-Golay smoothing; common practice): c.
Eigen::Vector3d LocalAcceleration(const std::vector<double>& t, const std::vector<Eigen::Vector3d>& x) {
  const double t_mid = t[t.size() / 2];
  Eigen::MatrixXd a(t.size(), 3);
  Eigen::MatrixXd b(t.size(), 3);
  for (size_t i = 0; i < t.size(); ++i) {
    const double tau = t[i] - t_mid;
    a.row(i) << 1.0, tau, 0.5 * tau * tau;
    b.row(i) = x[i].transpose();
  }
  const Eigen::MatrixXd coefficients = a.colPivHouseholderQr().solve(b);
  return coefficients.row(2).transpose();
}

// Runs of consecutive frame numbers in an ascending list, as [first, last], of at least
// `min_length` frames.
std::vector<std::pair<int, int>> ConsecutiveRuns(const std::vector<int>& frames, int min_length) {
  std::vector<std::pair<int, int>> runs;
  size_t start = 0;
  for (size_t i = 1; i <= frames.size(); ++i) {
    if (i < frames.size() && frames[i] == frames[i - 1] + 1) continue;
    if (i > start && frames[i - 1] - frames[start] + 1 >= min_length) {
      runs.emplace_back(frames[start], frames[i - 1]);
    }
    start = i;
  }
  return runs;
}

RunsTest Runs(const std::vector<ResidualRecord>& residuals, double z_limit) {
  // Series: (camera, marker, coordinate), in time order, inliers only.
  std::map<std::tuple<int, int, int>, std::vector<std::pair<int, double>>> series;
  for (const ResidualRecord& r : residuals) {
    if (r.outlier) continue;
    for (int c = 0; c < 2; ++c) series[{r.camera, r.marker_id, c}].push_back({r.frame, r.residual_px[c]});
  }
  RunsTest out;
  double variance = 0.0, lag_products = 0.0, squares = 0.0;
  for (auto& [key, values] : series) {
    std::sort(values.begin(), values.end());
    int plus = 0, minus = 0, runs = 0;
    int last_sign = 0;
    for (size_t i = 0; i < values.size(); ++i) {
      const int sign = values[i].second >= 0 ? 1 : -1;
      (sign > 0 ? plus : minus) += 1;
      if (sign != last_sign) ++runs;
      last_sign = sign;
      squares += values[i].second * values[i].second;
      if (i > 0 && values[i].first == values[i - 1].first + 1) {
        lag_products += values[i].second * values[i - 1].second;
      }
    }
    const double n = plus + minus;
    if (n < 2 || plus == 0 || minus == 0) continue;
    // E[R] = 2 n+ n- / n + 1, Var[R] = 2 n+ n- (2 n+ n- - n) / (n^2 (n - 1)).
    out.runs += runs;
    out.expected_runs += 2.0 * plus * minus / n + 1.0;
    variance += 2.0 * plus * minus * (2.0 * plus * minus - n) / (n * n * (n - 1));
  }
  if (variance > 0) out.z = (out.runs - out.expected_runs) / std::sqrt(variance);
  out.lag1_autocorrelation = squares > 0 ? lag_products / squares : 0.0;
  const double rho = std::clamp(out.lag1_autocorrelation, -0.95, 0.95);
  out.variance_factor = (1 + rho) / (1 - rho);
  out.white = std::abs(out.z) <= z_limit;
  if (out.white) {
    out.sentence = fmt::format(
        "The residuals look like independent noise: {} sign runs against {:.0f} expected "
        "(z = {:+.1f}), lag-1 autocorrelation {:+.3f}.",
        out.runs, out.expected_runs, out.z, out.lag1_autocorrelation);
  } else if (out.z < 0) {
    out.sentence = fmt::format(
        "The residuals are correlated in time: {} sign runs against {:.0f} expected for "
        "independent noise (z = {:+.1f}), lag-1 autocorrelation {:+.3f}. A model error (drag, "
        "a wrong window, a misidentified marker) or video compression can cause it. The "
        "reported uncertainties allow for noise correlated in time (each residual series' "
        "AR(1), fit.noise_model), which widens them here by up to about a factor {:.2f} "
        "(sqrt((1 + rho) / (1 - rho))); they do not allow for a model error, which biases the "
        "estimates.",
        out.runs, out.expected_runs, out.z, out.lag1_autocorrelation, std::sqrt(out.variance_factor));
  } else {
    out.sentence = fmt::format(
        "The residuals change sign more often than independent noise would: {} sign runs "
        "against {:.0f} expected (z = {:+.1f}), lag-1 autocorrelation {:+.3f} (an alternating "
        "error, such as interlacing or a frame-to-frame jitter of the timing).",
        out.runs, out.expected_runs, out.z, out.lag1_autocorrelation);
  }
  return out;
}

GravityCheck CheckGravity(const FitResult& fit, const DiagnoseOptions& options) {
  GravityCheck check;
  const Eigen::Matrix3d cov = fit.covariance.block<3, 3>(kG, kG);
  // Only when all of g was estimated (held, or only its direction: no check of the scale).
  if (!options.check_gravity || !(cov.trace() > 0)) return check;
  check.performed = true;
  const Eigen::Vector3d g = fit.parameters.g_world_mps2;
  check.expected_mps2 = options.expected_gravity_mps2.norm();
  check.estimated_mps2 = g.norm();
  const Eigen::Vector3d u = g.normalized();
  check.sigma_mps2 = std::sqrt(std::max(u.dot(cov * u), 0.0));
  check.z = (check.estimated_mps2 - check.expected_mps2) / std::max(check.sigma_mps2, 1e-300);
  check.ratio = check.estimated_mps2 / check.expected_mps2;
  // Times scale with 1 / rate, accelerations with rate^2: g_est = g (rate_stated /
  // rate_true)^2, so rate_true = rate_stated sqrt(g / g_est).
  check.implied_capture_fps_factor = std::sqrt(1.0 / check.ratio);
  check.flagged = std::abs(check.z) > options.gravity_z_limit &&
                  std::abs(check.ratio - 1.0) > options.gravity_relative_limit;
  const double angle_deg =
      std::acos(std::clamp(u.dot(options.expected_gravity_mps2.normalized()), -1.0, 1.0)) * 180 / M_PI;
  if (check.flagged) {
    check.sentence = fmt::format(
        "The gravity estimated from the flight, {:.4f} +/- {:.4f} m/s^2, differs from the "
        "session's {:.4f} m/s^2 by {:+.2f} % ({:+.1f} sigma): the capture rate or the camera's "
        "scale is off. If the lengths are right, the true capture rate is {:.4f} times the "
        "stated one; if the rate is right, the lengths are scaled by {:.4f} (check the "
        "calibration and the camera's distance). Its direction is {:.2f} deg from the "
        "session's.",
        check.estimated_mps2, check.sigma_mps2, check.expected_mps2, 100 * (check.ratio - 1),
        check.z, check.implied_capture_fps_factor, check.ratio, angle_deg);
  } else {
    check.sentence = fmt::format(
        "The gravity estimated from the flight, {:.4f} +/- {:.4f} m/s^2, agrees with the "
        "session's {:.4f} m/s^2 ({:+.2f} %, {:+.1f} sigma): the capture rate and the camera's "
        "scale are consistent. Its direction is {:.2f} deg from the session's.",
        check.estimated_mps2, check.sigma_mps2, check.expected_mps2, 100 * (check.ratio - 1),
        check.z, angle_deg);
  }
  return check;
}

}  // namespace

Diagnostics Diagnose(const FitResult& fit, const FreeFlightWindow& window, const Body& body,
                     const std::vector<Camera>& cameras, const DiagnoseOptions& options) {
  Diagnostics d;
  d.window = window;
  const FlightParameters& p = fit.parameters;

  // Per frame (the frame numbers of every camera together) and per marker.
  std::map<int, std::vector<const ResidualRecord*>> by_frame;
  std::map<int, MarkerDiagnostics> by_marker;
  std::map<int, double> marker_sum_sq;
  for (const ResidualRecord& r : fit.residuals) {
    MarkerDiagnostics& m = by_marker[r.marker_id];
    m.marker_id = r.marker_id;
    ++m.sightings;
    m.max_px = std::max(m.max_px, r.residual_px.norm());
    if (r.outlier) {
      ++m.outliers;
      continue;
    }
    marker_sum_sq[r.marker_id] += r.residual_px.squaredNorm();
    by_frame[r.frame].push_back(&r);
  }
  for (auto& [id, m] : by_marker) {
    const int inliers = m.sightings - m.outliers;
    m.rms_px = inliers > 0 ? std::sqrt(marker_sum_sq[id] / (2.0 * inliers)) : 0.0;
    d.markers.push_back(m);
  }
  std::vector<double> times;
  for (const auto& [frame, seen] : by_frame) {
    times.push_back(seen.front()->time_s + p.TimeOffsetS(seen.front()->camera));
  }
  std::vector<Eigen::Matrix3d> rotations;
  std::vector<Eigen::Vector3d> positions;
  p.RotationAt(times, &rotations, nullptr);
  p.TranslationAt(times, &positions, nullptr);
  size_t index = 0;
  for (const auto& [frame, seen] : by_frame) {
    FrameDiagnostics f;
    f.frame = frame;
    f.time_s = times[index];
    f.sightings = static_cast<int>(seen.size());
    double sum_sq = 0.0;
    for (const ResidualRecord* r : seen) sum_sq += r->residual_px.squaredNorm();
    f.rms_px = std::sqrt(sum_sq / (2.0 * seen.size()));
    f.cm_world_m = FrameCm(seen, positions[index], rotations[index], p.cm_body_m, body, cameras);
    d.frames.push_back(f);
    ++index;
  }
  // The acceleration residual: a local quadratic over about an eighth of the window
  // (at least 11 frames), minus gravity.
  const int n = static_cast<int>(d.frames.size());
  const int half = std::max(5, n / 16);
  d.acceleration_smoothing_frames = 2 * half + 1;
  for (int i = half; i + half < n; ++i) {
    std::vector<double> t;
    std::vector<Eigen::Vector3d> x;
    for (int k = i - half; k <= i + half; ++k) {
      if (d.frames[k].cm_world_m) {
        t.push_back(d.frames[k].time_s);
        x.push_back(*d.frames[k].cm_world_m);
      }
    }
    if (static_cast<int>(t.size()) < half) continue;
    d.frames[i].accel_residual_mps2 = LocalAcceleration(t, x) - p.g_world_mps2;
  }

  d.runs = Runs(fit.residuals, options.runs_z_limit);
  d.gravity = CheckGravity(fit, options);

  // The flags.
  if (window.detected) {
    for (const WindowEnd* end : {&window.start, &window.end}) {
      if (end->clip_edge) continue;
      BreakFlag flag;
      const bool start = end == &window.start;
      flag.kind = end->velocity_jump ? "impact" : (start ? "release" : "contact");
      if (start) {
        flag.last_frame = end->frame - 1;
      } else {
        flag.first_frame = end->frame + 1;
      }
      flag.sentence = end->sentence + " Those frames are left out of the fit.";
      d.flags.push_back(flag);
    }
  }
  // Frames where most sightings are outliers: the body itself left the modelled motion
  // there (a hand, a contact, an impact inside the window), not one marker.
  std::map<int, std::pair<int, int>> outliers_of_frame;  // frame -> (outliers, sightings)
  for (const ResidualRecord& r : fit.residuals) {
    outliers_of_frame[r.frame].second += 1;
    outliers_of_frame[r.frame].first += r.outlier ? 1 : 0;
  }
  const auto body_off = [&](int frame) {
    const auto& [outliers, sightings] = outliers_of_frame[frame];
    return 2 * outliers > sightings;
  };
  {
    std::vector<int> off;
    for (const auto& [frame, counts] : outliers_of_frame) {
      if (body_off(frame)) off.push_back(frame);
    }
    for (const auto& [first, last] : ConsecutiveRuns(off, options.marker_run_frames)) {
      d.flags.push_back({"frames", first, last, fmt::format(
          "In frames {}-{} most markers lie off the fitted motion: the body was not in free "
          "flight there (a hand, a contact, an impact). Those sightings are left out as "
          "outliers; fit a window without them (the window search, or --first-frame and "
          "--last-frame).",
          first, last)});
    }
  }
  // A marker whose sightings are outliers over several frames in a row while the others fit.
  {
    std::map<int, std::vector<int>> outlier_frames;
    for (const ResidualRecord& r : fit.residuals) {
      if (r.outlier && !body_off(r.frame)) outlier_frames[r.marker_id].push_back(r.frame);
    }
    for (auto& [id, list] : outlier_frames) {
      std::sort(list.begin(), list.end());
      for (const auto& [first, last] : ConsecutiveRuns(list, options.marker_run_frames)) {
        d.flags.push_back({"marker", first, last, fmt::format(
            "Marker {} lies off the fitted motion in frames {}-{} while the other markers fit: "
            "a misidentified, merged or partly hidden marker there. Those sightings are left "
            "out as outliers; check the tracks.",
            id, first, last)});
      }
    }
  }
  // Runs of frames that fit much worse than the rest of the window.
  {
    const double sigma = std::max(fit.sigma_px, 1e-9);
    std::vector<int> bad;
    std::map<int, double> rms_of;
    for (const FrameDiagnostics& f : d.frames) {
      // A frame's chi-square per component 1 + 5 sqrt(2 / k) above the noise: about 5 sigma.
      const int k = 2 * f.sightings;
      if (f.rms_px * f.rms_px / (sigma * sigma) > 1.0 + 5.0 * std::sqrt(2.0 / k)) {
        bad.push_back(f.frame);
        rms_of[f.frame] = f.rms_px;
      }
    }
    for (const auto& [first, last] : ConsecutiveRuns(bad, 3)) {
      double worst = 0.0;
      for (int frame = first; frame <= last; ++frame) worst = std::max(worst, rms_of[frame]);
      d.flags.push_back({"frames", first, last, fmt::format(
          "Frames {}-{} fit worse than the rest of the window (rms up to {:.2f} px against "
          "{:.2f} px): something acted on the body or the view there (a contact, a shadow, "
          "motion blur).",
          first, last, worst, fit.rms_px)});
    }
  }
  if (p.translation_model != TranslationModel::kVacuum) {
    d.flags.push_back({"air", fit.first_frame, fit.last_frame, fmt::format(
        "The air bends the path: the {} drag model fits significantly better than vacuum "
        "(k = {:.4g} 1/m). The CM and launch state come from the model with drag.",
        TranslationModelName(p.translation_model), p.aero[0])});
  }
  if (!d.runs.white) {
    d.flags.push_back({"correlated-residuals", fit.first_frame, fit.last_frame, d.runs.sentence});
  }
  if (d.gravity.flagged) {
    d.flags.push_back({"gravity", std::nullopt, std::nullopt, d.gravity.sentence});
  }
  return d;
}

}  // namespace tumbletrace
