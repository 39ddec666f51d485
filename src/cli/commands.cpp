#include "commands.hpp"

#include <fmt/format.h>
#include <fmt/ranges.h>
#include <unistd.h>

#include <cctype>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <map>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/summary.hpp"
#include "tumbletrace/model/mass_properties.hpp"
#include "tumbletrace/model/session.hpp"
#include "tumbletrace/model/tracks.hpp"
#include "tumbletrace/pipeline/pipeline.hpp"
#include "tumbletrace/report/html_report.hpp"
#include "tumbletrace/report/overlay.hpp"
#include "tumbletrace/report/results.hpp"
#include "tumbletrace/sim/simulate.hpp"
#include "tumbletrace/sim/target_views.hpp"

#ifndef TUMBLETRACE_VERSION
#define TUMBLETRACE_VERSION "unknown"
#endif

namespace tumbletrace::cli {
namespace {

// Progress goes to stderr, only when it is a terminal and not silenced.
bool ShowProgress(const CommonOptions& common) { return !common.quiet && isatty(fileno(stderr)); }

}  // namespace

int RunSimulate(const SimulateOptions& options, const CommonOptions& common) {
  if (IsTargetViewsScenario(options.scenario)) {
    const TargetViewsScenario setup = ReadTargetViewsScenario(options.scenario);
    const bool progress = ShowProgress(common);
    const TargetViewsOutput written =
        SimulateTargetViews(setup, options.out_dir, [&](int done, int total) {
          if (progress) {
            std::cerr << fmt::format("\rrendering frame {}/{}", done, total)
                      << (done == total ? "\n" : "") << std::flush;
          }
        });
    if (!common.quiet) {
      std::cout << fmt::format(
          "Simulated a camera set-up into {}: target_views.mp4 ({} frames, {} poses of the {} "
          "target){}, truth.json (the true intrinsics{})\n",
          options.out_dir.string(), written.frames, setup.views, TargetKindName(setup.target.kind),
          written.placed ? ", placed.png (a target in the throw region)" : "",
          written.placed ? " and pose" : "");
    }
    return 0;
  }
  Scenario scenario = ReadScenarioYaml(options.scenario);
  if (options.no_video) scenario.video.write = false;
  const Simulation sim = SimulateFlight(scenario);
  const bool progress = ShowProgress(common);
  WriteSimulation(sim, options.out_dir, [&](int done, int total) {
    if (progress && (done % 25 == 0 || done == total)) {
      std::cerr << fmt::format("\rrendering frame {}/{}", done, total)
                << (done == total ? "\n" : "") << std::flush;
    }
  });
  if (!common.quiet) {
    const Eigen::Vector3d& c = sim.mass.cm_body_m;
    std::string cameras;
    if (scenario.cameras.size() > 1) {
      std::vector<std::string> names;
      for (const ScenarioCamera& c : scenario.cameras) names.push_back(c.name);
      cameras = fmt::format(" by {} cameras ({})", names.size(), fmt::join(names, ", "));
    }
    std::cout << fmt::format(
        "Simulated {} frames at {} frames/s{} into {}\n  true CM in the body frame: [{:.3f}, "
        "{:.3f}, {:.3f}] mm, mass {:.4f} kg\n  spin {:.3f} rev/s, launch speed {:.3f} m/s\n",
        sim.frames.size(), scenario.capture_fps, cameras, options.out_dir.string(), 1e3 * c.x(),
        1e3 * c.y(), 1e3 * c.z(), sim.mass.mass_kg,
        scenario.launch_omega_body_radps.norm() / (2 * M_PI),
        scenario.launch_velocity_world_mps.norm());
  }
  return 0;
}

namespace {

// The session's fit options with the command line's choices on top.
FitOptions FitOptionsFor(const Session& session, const FitChoices& choices) {
  FitOptions options = tumbletrace::FitOptionsFor(session);
  if (choices.estimate_gravity) options.gravity_mode = GravityMode::kEstimate;
  if (choices.drag) {
    const std::map<std::string, DragChoice> drags = {{"auto", DragChoice::kAuto},
                                                      {"none", DragChoice::kNone},
                                                      {"quadratic", DragChoice::kQuadratic},
                                                      {"quadratic+lift", DragChoice::kQuadraticLift}};
    options.drag = drags.at(*choices.drag);  // CLI11 checked the name
  }
  if (choices.first_frame) options.first_frame = choices.first_frame;
  if (choices.last_frame) options.last_frame = choices.last_frame;
  const std::map<std::string, RotationChoice> rotations = {
      {"auto", RotationChoice::kAuto},
      {"constant-spin", RotationChoice::kConstantSpin},
      {"symmetric", RotationChoice::kSymmetricTop},
      {"free", RotationChoice::kFreeTop}};
  options.rotation = rotations.at(choices.rotation);  // CLI11 checked the name
  if (choices.inertia_from_parts) {
    if (session.body.parts.empty()) {
      throw InputError(fmt::format("--inertia-from-parts: the body file {} has no parts list to "
                                   "take the principal axes and moments from",
                                   session.body_file.string()));
    }
    const MassProperties design = CombineParts(session.body.parts);
    const PrincipalAxes principal = Principal(design.inertia_about_cm_kgm2);
    options.held_inertia = HeldInertia{principal.axes_body, principal.moments_kgm2};
    if (options.rotation == RotationChoice::kAuto || options.rotation == RotationChoice::kSymmetricTop) {
      options.rotation = RotationChoice::kFreeTop;
    }
  }
  return options;
}

// results.json after the CSV files: its presence says the fit's files are complete; the
// report is made from them alone, as `report DIR` makes it.
void WriteFitOutputs(const FlightAnalysis& flight, const Provenance& provenance, const Body& body,
                     const std::filesystem::path& out_dir, const CommonOptions& common) {
  std::filesystem::create_directories(out_dir);
  WriteFramesCsv(flight.fit, flight.summary, out_dir / "frames.csv", flight.diagnostics);
  WriteResidualsCsv(flight.fit, out_dir / "residuals.csv");
  nlohmann::json results = ResultsJson(flight.fit, flight.summary, provenance, flight.diagnostics);
  AddReportKeys(&results, body, provenance.input_files);
  WriteResultsJson(results, out_dir / "results.json");
  WriteHtmlReport(out_dir);
  if (!common.quiet) {
    std::cout << SummaryText(flight.fit, flight.summary, flight.diagnostics);
  } else {
    for (const std::string& w : flight.fit.warnings) std::cerr << "warning: " << w << "\n";
  }
}

// The session's files; with `with_clips`, each camera's clip too (what `analyze` reads).
Provenance MakeProvenance(const Session& session, const CommonOptions& common, bool with_clips) {
  Provenance provenance;
  provenance.tool_version = TUMBLETRACE_VERSION;
  provenance.command = common.command_line;
  provenance.input_files = {session.file};
  for (const SessionCamera& camera : session.cameras) {
    provenance.input_files.push_back(camera.camera_file);
  }
  provenance.input_files.push_back(session.body_file);
  if (with_clips) {
    for (const SessionCamera& camera : session.cameras) provenance.input_files.push_back(camera.clip);
  }
  provenance.capture_fps = session.capture_fps;
  return provenance;
}

// A progress line on stderr, only for a terminal and not under -q.
Progress MakeProgress(const CommonOptions& common, const std::string& what) {
  if (!ShowProgress(common)) return {};
  return [what](int done, int total) {
    if (done % 50 != 0) return;
    if (total > 0) {
      std::cerr << fmt::format("\r{} frame {}/{}", what, done, total) << std::flush;
    } else {
      std::cerr << fmt::format("\r{} frame {}", what, done) << std::flush;
    }
  };
}

void EndProgress(const CommonOptions& common) {
  if (ShowProgress(common)) std::cerr << "\n";
}

// One line per camera, each named when there are several.
std::string TrackingSummary(const TrackingResult& t) {
  std::string text;
  for (const CameraTracking& c : t.cameras) {
    if (t.cameras.size() > 1) text += c.name + ": ";
    text += fmt::format(
        "Read {} frames ({}x{} px, {}-bit {}); {} detections (background filter radius {} px); "
        "{} tracks, {} identified as markers (assignment rms {:.3f} px){}\n",
        c.frames_read, c.clip.size.width, c.clip.size.height, c.clip.bit_depth, c.clip.kind,
        c.detections, c.background_radius_px,
        c.identification.marker_of_track.size() + c.identification.unidentified_tracks.size(),
        c.identification.marker_of_track.size(), c.identification.anchor_rms_px,
        c.off_size > 0 ? fmt::format("; {} sightings of another size than their marker's image "
                                       "in the frame (partly hidden, or merged) left out of the fit",
                                       c.off_size)
                         : std::string());
  }
  return text;
}

// Every point's marker is in the body and its camera in the session; InputError naming the
// tracks file and line otherwise.
void CheckTracksAgainstSession(const std::vector<TrackPoint>& tracks,
                               const std::filesystem::path& tracks_file, const Session& session) {
  for (const TrackPoint& p : tracks) {
    if (p.marker && session.body.FindMarker(*p.marker) == nullptr) {
      throw InputError(fmt::format("{}:{}: column 'marker': marker {} is not defined in {}",
                                   tracks_file.string(), p.source_line, *p.marker,
                                   session.body_file.string()));
    }
    if (p.camera >= static_cast<int>(session.cameras.size())) {
      throw InputError(fmt::format(
          "{}:{}: column 'camera': expected a camera index from 0 to {} (the cameras of {}), "
          "got {}",
          tracks_file.string(), p.source_line, session.cameras.size() - 1, session.file.string(),
          p.camera));
    }
  }
}

// A warning for each camera of the session of which the tracks hold no identified point.
std::vector<std::string> CamerasWithoutSightings(const std::vector<TrackPoint>& tracks,
                                                 const std::filesystem::path& tracks_file,
                                                 const Session& session) {
  std::vector<bool> seen(session.cameras.size(), false);
  for (const TrackPoint& p : tracks) {
    if (p.marker) seen[p.camera] = true;
  }
  std::vector<std::string> warnings;
  for (size_t k = 0; k < seen.size(); ++k) {
    if (seen[k]) continue;
    warnings.push_back(fmt::format(
        "{} holds no identified marker of camera '{}' (camera {} of {}): that camera took no "
        "part in the fit",
        tracks_file.string(), session.cameras[k].name, k, session.file.string()));
  }
  return warnings;
}

// overlay.mp4 (one camera) or overlay_<name>.mp4 (several): each camera's clip with the fit
// drawn on it. The window's frames of camera k are those whose world time lies in the first
// camera's window: t = i / fps_k + offset_k.
void WriteOverlays(const Session& session, const Analysis& analysis,
                   const std::filesystem::path& out_dir) {
  const FitResult& fit = analysis.flight.fit;
  const std::vector<Camera> cameras = session.CameraModels();
  const std::vector<double> rates = session.CaptureRates();
  const double t_first = fit.first_frame / rates[0], t_last = fit.last_frame / rates[0];
  for (size_t k = 0; k < session.cameras.size(); ++k) {
    OverlayInput input;
    input.clip = session.cameras[k].clip;
    input.camera = cameras[k];
    input.camera_index = static_cast<int>(k);
    input.capture_fps = rates[k];
    input.parameters = &fit.parameters;
    input.markers = session.body.markers;
    for (const TrackPoint& p : analysis.tracking.points) {
      if (p.camera == static_cast<int>(k)) input.detections.push_back(p);
    }
    const double offset = fit.parameters.TimeOffsetS(static_cast<int>(k));
    input.first_frame = static_cast<int>(std::ceil((t_first - offset) * rates[k] - 1e-6));
    input.last_frame = static_cast<int>(std::floor((t_last - offset) * rates[k] + 1e-6));
    std::string safe = session.cameras[k].name;
    for (char& c : safe) {
      if (!std::isalnum(static_cast<unsigned char>(c)) && c != '-' && c != '_') c = '_';
    }
    const std::string name = session.cameras.size() == 1 ? "overlay.mp4" : "overlay_" + safe + ".mp4";
    WriteOverlayVideo(input, out_dir / name);
  }
}

}  // namespace

int RunFit(const FitCommandOptions& options, const CommonOptions& common) {
  const Session session = ReadSessionYaml(options.session);
  const std::vector<TrackPoint> tracks = ReadTracksCsv(options.tracks);
  CheckTracksAgainstSession(tracks, options.tracks, session);
  FitOptions fit_options = FitOptionsFor(session, options.choices);
  fit_options.robust_loss_scale_px = options.robust_scale_px;

  FlightAnalysis flight = FitSession(GroupByFrame(tracks, session.CaptureRates()), session,
                                     fit_options,
                                     session.search_window && !options.choices.whole_clip);
  for (std::string& w : CamerasWithoutSightings(tracks, options.tracks, session)) {
    flight.fit.warnings.push_back(std::move(w));
  }
  Provenance provenance = MakeProvenance(session, common, false);
  provenance.input_files.push_back(options.tracks);
  WriteFitOutputs(flight, provenance, session.body, options.out_dir, common);
  return 0;
}

int RunTrack(const TrackCommandOptions& options, const CommonOptions& common) {
  const Session session = ReadSessionYaml(options.session);
  const TrackingResult tracking = TrackClip(session, TrackingOptions{}, MakeProgress(common, "tracking"));
  EndProgress(common);
  std::filesystem::create_directories(options.out_dir);
  WriteTracksCsv(tracking.points, options.out_dir / "tracks.csv");
  if (!common.quiet) std::cout << TrackingSummary(tracking);
  for (const std::string& w : tracking.warnings) std::cerr << "warning: " << w << "\n";
  return 0;
}

int RunAnalyze(const AnalyzeOptions& options, const CommonOptions& common) {
  Session session = ReadSessionYaml(options.session);
  if (options.choices.whole_clip) session.search_window = false;
  const FitOptions fit_options = FitOptionsFor(session, options.choices);
  const Analysis analysis =
      AnalyzeSession(session, TrackingOptions{}, fit_options, MakeProgress(common, "analysing"));
  EndProgress(common);
  std::filesystem::create_directories(options.out_dir);
  WriteTracksCsv(analysis.tracking.points, options.out_dir / "tracks.csv");
  if (!common.quiet) std::cout << TrackingSummary(analysis.tracking);
  WriteFitOutputs(analysis.flight, MakeProvenance(session, common, true), session.body,
                  options.out_dir, common);
  if (options.overlay) WriteOverlays(session, analysis, options.out_dir);
  return 0;
}

int RunReport(const ReportOptions& options, const CommonOptions& common) {
  WriteHtmlReport(options.dir);
  if (!common.quiet) std::cout << "Wrote " << (options.dir / "report.html").string() << "\n";
  return 0;
}

}  // namespace tumbletrace::cli
