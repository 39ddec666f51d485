#include "commands.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <cstdio>
#include <iostream>

#include "tumbletrace/core/error.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/summary.hpp"
#include "tumbletrace/model/session.hpp"
#include "tumbletrace/model/tracks.hpp"
#include "tumbletrace/report/results.hpp"
#include "tumbletrace/sim/simulate.hpp"

#ifndef TUMBLETRACE_VERSION
#define TUMBLETRACE_VERSION "unknown"
#endif

namespace tumbletrace::cli {
namespace {

// Progress goes to stderr, only when it is a terminal and not silenced.
bool ShowProgress(const CommonOptions& common) { return !common.quiet && isatty(fileno(stderr)); }

}  // namespace

int RunSimulate(const SimulateOptions& options, const CommonOptions& common) {
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
    std::cout << fmt::format(
        "Simulated {} frames at {} frames/s into {}\n  true CM in the body frame: [{:.3f}, "
        "{:.3f}, {:.3f}] mm, mass {:.4f} kg\n  spin {:.3f} rev/s, launch speed {:.3f} m/s\n",
        sim.frames.size(), scenario.capture_fps, options.out_dir.string(), 1e3 * c.x(),
        1e3 * c.y(), 1e3 * c.z(), sim.mass.mass_kg,
        scenario.launch_omega_body_radps.norm() / (2 * M_PI),
        scenario.launch_velocity_world_mps.norm());
  }
  return 0;
}

int RunFit(const FitCommandOptions& options, const CommonOptions& common) {
  const Session session = ReadSessionYaml(options.session);
  const std::vector<TrackPoint> tracks = ReadTracksCsv(options.tracks);
  for (size_t i = 0; i < tracks.size(); ++i) {
    if (tracks[i].marker && session.body.FindMarker(*tracks[i].marker) == nullptr) {
      throw InputError(fmt::format("{}:{}: column 'marker': marker {} is not defined in {}",
                                   options.tracks.string(), tracks[i].source_line, *tracks[i].marker,
                                   session.body_file.string()));
    }
  }
  FitOptions fit_options;
  const std::optional<Eigen::Vector3d> g = session.gravity.WorldVector();
  if (!g || !session.camera.camera_from_world) {
    throw InputError(fmt::format(
        "{}: the fit needs gravity as a world vector (gravity_mps2: [x, y, z] or gravity: "
        "{{latitude_deg, elevation_m}}) and a camera with world_to_camera; estimating the "
        "direction of gravity from the flight is not available yet",
        options.session.string()));
  }
  fit_options.gravity_world_mps2 = *g;
  fit_options.gravity_mode = options.estimate_gravity ? GravityMode::kEstimate : GravityMode::kFixed;
  fit_options.robust_loss_scale_px = options.robust_scale_px;
  fit_options.first_frame = options.first_frame ? options.first_frame : session.first_frame;
  fit_options.last_frame = options.last_frame ? options.last_frame : session.last_frame;

  FitResult fit = FitFreeFlight(GroupByFrame(tracks, session.capture_fps), session.body,
                                session.camera, fit_options);
  const FlightSummary summary = Summarise(fit, session.body);
  Provenance provenance;
  provenance.tool_version = TUMBLETRACE_VERSION;
  provenance.command = common.command_line;
  provenance.input_files = {options.session, session.camera_file, session.body_file,
                            options.tracks};
  provenance.capture_fps = session.capture_fps;

  std::filesystem::create_directories(options.out_dir);
  WriteFramesCsv(fit, summary, options.out_dir / "frames.csv");
  WriteResidualsCsv(fit, options.out_dir / "residuals.csv");
  // results.json last: its presence says the run completed.
  WriteResultsJson(ResultsJson(fit, summary, provenance), options.out_dir / "results.json");
  if (!common.quiet) {
    std::cout << SummaryText(fit, summary);
  } else {
    for (const std::string& w : fit.warnings) std::cerr << "warning: " << w << "\n";
  }
  return 0;
}

}  // namespace tumbletrace::cli
