#include "tumbletrace/fit/window.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <map>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

// One sighting against a model: e = observed - predicted, px, and the rows of the rigid
// deviation's design, G = J [I, -[l]x] (J the pixel Jacobian of the world point, l the
// marker's lever from the CM, world frame): a small shift dp and turn dtheta of the body
// move the marker's pixel by G [dp; dtheta].
struct Seen {
  int camera = 0;
  int marker_id = 0;
  double time_s = 0.0;
  Eigen::Vector2d e = Eigen::Vector2d::Zero();
  Eigen::Matrix<double, 2, 6> g = Eigen::Matrix<double, 2, 6>::Zero();
  bool valid = false;
};

using SeenByFrame = std::map<int, std::vector<Seen>>;

SeenByFrame Predict(const FlightParameters& p, const std::vector<FrameSightings>& frames,
                    const Body& body, const std::vector<Camera>& cameras) {
  std::vector<double> times;
  for (const FrameSightings& f : frames) times.push_back(f.time_s + p.TimeOffsetS(f.camera));
  std::vector<Eigen::Matrix3d> rotations;
  std::vector<Eigen::Vector3d> positions;
  p.RotationAt(times, &rotations, nullptr);
  p.TranslationAt(times, &positions, nullptr);
  SeenByFrame out;
  for (size_t i = 0; i < frames.size(); ++i) {
    const FrameSightings& f = frames[i];
    const Camera& camera = cameras[f.camera];
    for (const MarkerSighting& s : f.sightings) {
      const Marker* m = body.FindMarker(s.marker_id);
      if (m == nullptr) continue;
      Seen seen;
      seen.camera = f.camera;
      seen.marker_id = s.marker_id;
      seen.time_s = times[i];
      const Eigen::Vector3d lever = rotations[i] * (m->at_body_m - p.cm_body_m);
      const Eigen::Vector3d x = positions[i] + lever;
      Eigen::Vector2d predicted;
      if (ProjectWorldPoint(camera, x, &predicted)) {
        Eigen::Matrix<double, 2, 3> j;
        const double h = 1e-6;
        bool ok = true;
        for (int k = 0; k < 3 && ok; ++k) {
          Eigen::Vector2d up, down;
          ok = ProjectWorldPoint(camera, x + h * Eigen::Vector3d::Unit(k), &up) &&
               ProjectWorldPoint(camera, x - h * Eigen::Vector3d::Unit(k), &down);
          j.col(k) = (up - down) / (2 * h);
        }
        if (ok) {
          Eigen::Matrix3d cross;
          cross << 0, -lever.z(), lever.y(), lever.z(), 0, -lever.x(), -lever.y(), lever.x(), 0;
          seen.e = s.pixel - predicted;
          seen.g.leftCols<3>() = j;
          seen.g.rightCols<3>() = -j * cross;
          seen.valid = true;
        }
      }
      out[f.frame].push_back(seen);
    }
  }
  return out;
}

// Capped chi-square of a frame's sightings and their residual component count.
std::pair<double, int> FrameChi2(const std::vector<Seen>& seen, double sigma_px, double cap) {
  double chi2 = 0.0;
  int n = 0;
  for (const Seen& s : seen) {
    if (!s.valid) continue;
    chi2 += std::min(s.e.squaredNorm() / (sigma_px * sigma_px), cap);
    n += 2;
  }
  return {chi2, n};
}

// The frames after a break (or before, for a start), explained by a rigid deviation
// D(tau) = V tau + A tau^2 / 2 from the break on (V, A: 6 each, translation and rotation).
// Returns the capped chi-square left. `velocity` false: V held 0 (a smooth departure).
double DeviationChi2(const std::vector<const Seen*>& seen, double t_break_s, double sigma_px,
                     double cap, bool velocity) {
  const int columns = velocity ? 12 : 6;
  Eigen::MatrixXd normal = Eigen::MatrixXd::Zero(columns, columns);
  Eigen::VectorXd rhs = Eigen::VectorXd::Zero(columns);
  std::vector<Eigen::MatrixXd> rows;
  rows.reserve(seen.size());
  for (const Seen* s : seen) {
    const double tau = s->time_s - t_break_s;
    Eigen::MatrixXd x(2, columns);
    if (velocity) {
      x.leftCols(6) = s->g * tau;
      x.rightCols(6) = s->g * (0.5 * tau * tau);
    } else {
      x = s->g * (0.5 * tau * tau);
    }
    normal += x.transpose() * x;
    rhs += x.transpose() * s->e;
    rows.push_back(std::move(x));
  }
  const Eigen::VectorXd theta = normal.completeOrthogonalDecomposition().solve(rhs);
  double chi2 = 0.0;
  for (size_t i = 0; i < seen.size(); ++i) {
    chi2 += std::min((seen[i]->e - rows[i] * theta).squaredNorm() / (sigma_px * sigma_px), cap);
  }
  return chi2;
}

FitResult FitRange(const std::vector<FrameSightings>& frames, const Body& body,
                   const std::vector<Camera>& cameras, FitOptions options, int first, int last) {
  options.first_frame = first;
  options.last_frame = last;
  return FitFreeFlight(frames, body, cameras, options);
}

RotationChoice ChoiceOf(RotationModel model) {
  switch (model) {
    case RotationModel::kConstantSpin: return RotationChoice::kConstantSpin;
    case RotationModel::kSymmetricTop: return RotationChoice::kSymmetricTop;
    case RotationModel::kFreeTop: return RotationChoice::kFreeTop;
  }
  return RotationChoice::kAuto;
}

struct ScanResult {
  int frame_index = 0;  // index of the first (start) or last (end) free frame
  double sigma_frames = 0.0;
  bool velocity_jump = false;
};

// The change-point scan at one end (see window.hpp). `index_of` lists the frame numbers.
ScanResult ScanBreak(const SeenByFrame& seen, const std::vector<int>& frame_numbers,
                     const std::map<int, double>& time_of, int edge_index, bool at_end,
                     double sigma_px, const WindowSearchOptions& options) {
  const int n = static_cast<int>(frame_numbers.size());
  // Region [lo, hi] of frame indices; free frames on the inner side of the candidate.
  int lo, hi;
  if (at_end) {
    lo = std::max(0, edge_index - options.scan_inside_frames);
    hi = std::min(n - 1, edge_index + options.scan_outside_frames);
  } else {
    lo = std::max(0, edge_index - options.scan_outside_frames);
    hi = std::min(n - 1, edge_index + options.scan_inside_frames);
  }
  const auto frame_seen = [&](int index) -> const std::vector<Seen>& {
    static const std::vector<Seen> none;
    const auto it = seen.find(frame_numbers[index]);
    return it == seen.end() ? none : it->second;
  };
  std::vector<std::pair<int, double>> costs;  // (candidate index, cost)
  double least_smooth = std::numeric_limits<double>::infinity();
  const int first_candidate = at_end ? lo : lo + options.min_outside_frames;
  const int last_candidate = at_end ? hi - options.min_outside_frames : hi;
  for (int b = first_candidate; b <= last_candidate; ++b) {
    double cost = 0.0;
    std::vector<const Seen*> outside;
    for (int i = lo; i <= hi; ++i) {
      const bool inside = at_end ? i <= b : i >= b;
      if (inside) {
        cost += FrameChi2(frame_seen(i), sigma_px, options.capped_chi2).first;
      } else {
        for (const Seen& s : frame_seen(i)) {
          if (s.valid) outside.push_back(&s);
        }
      }
    }
    // The break halfway between the last free frame and the first one after it.
    const int other = at_end ? b + 1 : b - 1;
    const double t_break = 0.5 * (time_of.at(frame_numbers[b]) + time_of.at(frame_numbers[other]));
    costs.emplace_back(b, cost + DeviationChi2(outside, t_break, sigma_px, options.capped_chi2, true));
    least_smooth = std::min(
        least_smooth, cost + DeviationChi2(outside, t_break, sigma_px, options.capped_chi2, false));
  }
  ScanResult result;
  if (costs.empty()) {
    result.frame_index = edge_index;
    return result;
  }
  const auto best = std::min_element(costs.begin(), costs.end(),
                                     [](const auto& a, const auto& b) { return a.second < b.second; });
  result.frame_index = best->first;
  double half_width = 0.5;
  for (const auto& [b, cost] : costs) {
    if (cost - best->second <= 1.0) half_width = std::max(half_width, std::abs(double(b - best->first)));
  }
  result.sigma_frames = half_width;
  // A jump of velocity or a smooth departure: the least cost over the candidates with the
  // deviation's velocity jump and without it, compared at the 0.999 quantile of chi-square
  // with 6 degrees of freedom (22.46). Each at its own best break: a smooth departure
  // scored one frame off its true start would otherwise look like a jump.
  result.velocity_jump = least_smooth - best->second > 22.46;
  return result;
}

}  // namespace

FreeFlightWindow FindFreeFlightWindow(const std::vector<FrameSightings>& frames, const Body& body,
                                      const std::vector<Camera>& cameras,
                                      const FitOptions& fit_options,
                                      const WindowSearchOptions& options) {
  std::map<int, double> time_of;
  for (const FrameSightings& f : frames) {
    if (!f.sightings.empty() && !time_of.count(f.frame)) time_of[f.frame] = f.time_s;
  }
  std::vector<int> frame_numbers;
  for (const auto& [frame, t] : time_of) frame_numbers.push_back(frame);
  const int n = static_cast<int>(frame_numbers.size());
  if (n < 10) {
    throw DataError(fmt::format("{} frames with identified markers: too few to find the "
                                "free-flight window (at least 10)",
                                n));
  }
  FreeFlightWindow window;
  window.detected = true;
  window.criterion =
      "grown from the middle " + fmt::format("{:.0f}", 100 * options.core_fraction) +
      " % of the frames while each new chunk's chi-square, after refitting with it, stays within " +
      fmt::format("{:.0f}", options.refuse_sigma) +
      " standard deviations of its expectation or its mean within " +
      fmt::format("{:.1f}", options.refuse_variance_ratio) +
      " times the noise variance or its rms within " +
      fmt::format("{:.2f}", options.refuse_excess_px) +
      " px of the noise (with, or else without, the one marker that carries most of it: a "
      "departure of the body is seen across the markers); each refused end located by a change-point "
      "scan (the model before the break, a rigid deviation after it; 68 % profile-likelihood "
      "interval)";

  // The growth fits: the user's rotation choice for the core, then the core's model; the
  // drag held as a free parameter (nested: k near 0 in vacuum) unless the user chose.
  FitOptions grow = fit_options;
  if (grow.drag == DragChoice::kAuto) grow.drag = DragChoice::kQuadratic;
  grow.torque_free_needs_axes = false;
  const int core = std::max(10, static_cast<int>(std::lround(options.core_fraction * n)));
  int lo = std::max(0, (n - core) / 2);
  int hi = std::min(n - 1, lo + core - 1);
  FitResult model = FitRange(frames, body, cameras, grow, frame_numbers[lo], frame_numbers[hi]);
  ++window.fits;
  grow.rotation = ChoiceOf(model.parameters.rotation_model);
  bool open_start = lo > 0, open_end = hi < n - 1;
  // A refused chunk is halved and tried again, down to the smallest chunk, so that the
  // grown edge ends within that many frames of the break, where the scan looks for it.
  int halvings[2] = {0, 0};
  while (open_start || open_end) {
    for (const bool at_end : {false, true}) {
      bool& open = at_end ? open_end : open_start;
      if (!open) continue;
      const int chunk = std::max(
          options.min_chunk_frames,
          static_cast<int>(std::lround(options.chunk_fraction * (hi - lo + 1))) >> halvings[at_end]);
      const int from = at_end ? hi + 1 : std::max(0, lo - chunk);
      const int to = at_end ? std::min(n - 1, hi + chunk) : lo - 1;
      // The model refitted with the chunk, and the chunk's sightings against it: a chunk
      // across a break leaves residuals no single free flight can take up.
      const int new_lo = at_end ? lo : from, new_hi = at_end ? to : hi;
      FitResult trial = FitRange(frames, body, cameras, grow, frame_numbers[new_lo],
                                 frame_numbers[new_hi]);
      ++window.fits;
      // Judged against the noise of the window accepted so far: a trial fit that the chunk
      // broke (an impact inside it) inflates its own noise estimate until the chunk looks
      // normal against it.
      const FitResult& reference = model;
      const SeenByFrame seen = Predict(trial.parameters, frames, body, cameras);
      // The chunk's capped chi-square, in all and per marker.
      double chi2 = 0.0;
      int components = 0;
      std::map<std::pair<int, int>, std::pair<double, int>> of_marker;  // (camera, marker)
      for (int i = from; i <= to; ++i) {
        const auto it = seen.find(frame_numbers[i]);
        if (it == seen.end()) continue;
        for (const Seen& s : it->second) {
          if (!s.valid) continue;
          const double c = std::min(s.e.squaredNorm() / (reference.sigma_px * reference.sigma_px),
                                    options.capped_chi2);
          chi2 += c;
          components += 2;
          auto& [marker_chi2, marker_components] = of_marker[{s.camera, s.marker_id}];
          marker_chi2 += c;
          marker_components += 2;
        }
      }
      // Taken when it fits as free flight: its chi-square within `refuse_sigma` standard
      // deviations of expectation, or its mean within `refuse_variance_ratio` of the noise
      // variance, or its rms within `refuse_excess_px` of the noise.
      const auto fits_free_flight = [&](double c, int k) {
        if (k <= 0) return true;
        const double z = (c - k) / std::sqrt(2.0 * k);
        const double ratio = c / k;
        const double excess_px = reference.sigma_px * (std::sqrt(ratio) - 1.0);
        return z <= options.refuse_sigma || ratio <= options.refuse_variance_ratio ||
               excess_px <= options.refuse_excess_px;
      };
      // A departure of the body is seen across the markers: a chunk whose misfit one marker
      // carries (partly hidden or shadowed there, its centre biased) is taken when it fits
      // without that marker, whose sightings the fit's outlier test then judges.
      bool take = fits_free_flight(chi2, components);
      if (!take && of_marker.size() >= 3) {
        const auto worst = std::max_element(of_marker.begin(), of_marker.end(), [](const auto& a, const auto& b) {
          return a.second.first < b.second.first;
        });
        take = fits_free_flight(chi2 - worst->second.first, components - worst->second.second);
      }
      const double z = components > 0 ? (chi2 - components) / std::sqrt(2.0 * components) : 0.0;
      WindowEnd& end = at_end ? window.end : window.start;
      if (take) {
        lo = new_lo;
        hi = new_hi;
        model = std::move(trial);
        if ((at_end && hi == n - 1) || (!at_end && lo == 0)) {
          open = false;
          end.clip_edge = true;
        }
      } else if (chunk > options.min_chunk_frames) {
        ++halvings[at_end];
      } else {
        open = false;
        end.excess_chi2 = z;
      }
    }
  }

  // The breaks.
  const SeenByFrame seen = Predict(model.parameters, frames, body, cameras);
  int first_index = lo, last_index = hi;
  for (const bool at_end : {false, true}) {
    WindowEnd& end = at_end ? window.end : window.start;
    if (end.clip_edge) {
      end.frame = frame_numbers[at_end ? n - 1 : 0];
      end.sentence = at_end ? fmt::format("Free flight lasts to the clip's last frame with "
                                          "markers ({}): no end was seen.",
                                          end.frame)
                            : fmt::format("Free flight is already under way at the clip's first "
                                          "frame with markers ({}): no release was seen.",
                                          end.frame);
      continue;
    }
    const ScanResult scan = ScanBreak(seen, frame_numbers, time_of, at_end ? hi : lo, at_end,
                                      model.sigma_px, options);
    (at_end ? last_index : first_index) = scan.frame_index;
    end.frame = frame_numbers[scan.frame_index];
    end.sigma_frames = scan.sigma_frames;
    end.velocity_jump = scan.velocity_jump;
    const double t = time_of.at(end.frame);
    if (at_end) {
      end.sentence = fmt::format(
          "Free flight ends at frame {} ({:.4f} s, +/- {:.1f} frames): after it the markers leave "
          "the free-flight path {}.",
          end.frame, t, end.sigma_frames,
          end.velocity_jump ? "with a sudden change of velocity (an impact, a bounce or a catch)"
                            : "smoothly (a contact, or a force the model does not have)");
    } else {
      end.sentence = fmt::format(
          "Free flight starts at frame {} ({:.4f} s, +/- {:.1f} frames): before it the markers "
          "depart from the free-flight path {}.",
          end.frame, t, end.sigma_frames,
          end.velocity_jump ? "with a sudden change of velocity (a strike or a collision)"
                            : "smoothly (the hand, or another contact, still acting: the release)");
    }
  }
  if (first_index >= last_index) {
    throw DataError("no free flight found: the window search left fewer than two frames");
  }
  return window;
}

}  // namespace tumbletrace
