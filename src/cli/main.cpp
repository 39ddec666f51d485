// tumbletrace: the free flight of a thrown rigid body from high-speed video of markers.
#include <CLI/CLI.hpp>
#include <fmt/format.h>
#include <glog/logging.h>

#include <iostream>

#include "commands.hpp"
#include "tumbletrace/core/error.hpp"

namespace {

constexpr const char* kDescription =
    "tumbletrace reconstructs the free flight of a thrown rigid body from high-speed video "
    "of markers on it: the centre of mass (CM) in the body frame with its uncertainty, the "
    "launch velocity and the spin.\n\n"
    "Exit codes: 0 done; 1 internal error; 2 bad input (the message names the file, key or "
    "line); 3 the data do not support a fit.";

void AddFitChoices(CLI::App* command, tumbletrace::cli::FitChoices* choices) {
  command->add_flag("--estimate-gravity", choices->estimate_gravity,
                    "estimate all of g as a check of the camera's scale and the capture rate: a "
                    "wrong rate or scale shows as a g off the session's, and is flagged");
  command->add_option("--rotation", choices->rotation,
                      "rotation model: constant-spin (a spin about a principal axis), symmetric "
                      "(two equal principal moments: a precessing symmetric top), free (three "
                      "unequal moments: wobble, tumble, flips), or auto: all three fitted and "
                      "the one with the lowest BIC reported, with the reason")
      ->capture_default_str()
      ->check(CLI::IsMember({"auto", "constant-spin", "symmetric", "free"}));
  command->add_flag("--inertia-from-parts", choices->inertia_from_parts,
                    "hold the principal axes and moment ratios at those of the body's parts "
                    "list instead of estimating them (free model)");
  command->add_option("--drag", choices->drag,
                      "the air: none (vacuum), quadratic (drag a = g - k |v| v), quadratic+lift "
                      "(drag and a Magnus lift from the spin), or auto: each fitted and the one "
                      "with the lowest BIC reported (default: the session's `drag`, else auto)")
      ->check(CLI::IsMember({"auto", "none", "quadratic", "quadratic+lift"}));
  command->add_option("--first-frame", choices->first_frame,
                      "first frame of the free-flight window (default: found from the data)");
  command->add_option("--last-frame", choices->last_frame,
                      "last frame of the free-flight window (default: found from the data)");
  command->add_flag("--whole-clip", choices->whole_clip,
                    "fit every frame with markers instead of searching for the free flight "
                    "(release to catch or impact)");
}

}  // namespace

int main(int argc, char** argv) {
  using tumbletrace::ExitCode;
  namespace cli = tumbletrace::cli;
  // Ceres logs its solver's internal terminations at ERROR; the fit reads each solve's summary
  // and reports what matters in its own words, so those lines would only confuse.
  FLAGS_minloglevel = google::GLOG_FATAL;
  FLAGS_logtostderr = true;  // never log files
  google::InitGoogleLogging(argv[0]);
  CLI::App app(kDescription, "tumbletrace");
  app.require_subcommand(1);
  app.footer(
      "\nStart here:  tumbletrace analyze session.yaml -o out/\n"
      "Camera set-up:  tumbletrace calibrate (intrinsics from target views), tumbletrace locate "
      "(the camera's pose in the world)\n"
      "A session names the clip, the capture rate, the camera (or a list of cameras) and the "
      "body files; see README.md and docs/files.md. Try it on the demo: tumbletrace analyze "
      "data-demo/session.yaml -o out/demo");
  app.set_version_flag("--version", TUMBLETRACE_VERSION);
  cli::CommonOptions common;
  for (int i = 0; i < argc; ++i) common.command_line += (i ? " " : "") + std::string(argv[i]);

  cli::AnalyzeOptions analyze;
  CLI::App* analyze_cmd = app.add_subcommand(
      "analyze",
      "The whole job: markers in the clip -> tracks -> identified markers -> free-flight fit; "
      "finds the free-flight frames (release to catch or impact), chooses the rotation and "
      "drag models, and writes results.json (CM in the body frame, launch state, spin, "
      "principal axes and moment ratios when the body tumbles, drag, all with uncertainty; "
      "the window, break flags and residual checks), frames.csv, residuals.csv, "
      "tracks.csv, report.html (the fit report) and overlay.mp4 (the clip with the fit drawn "
      "on it; overlay_<camera>.mp4 with several cameras), and prints a summary.");
  analyze_cmd->add_option("session", analyze.session, "session YAML file")->required()->check(CLI::ExistingFile);
  analyze_cmd->add_option("-o,--out", analyze.out_dir, "output folder (created when missing)")->required();
  AddFitChoices(analyze_cmd, &analyze.choices);
  bool no_overlay = false;
  analyze_cmd->add_flag("--no-overlay", no_overlay,
                        "skip overlay.mp4 (its rendering and encoding take about as long as the fit)");
  analyze_cmd->add_flag("-q,--quiet", common.quiet, "print nothing but errors and warnings");

  cli::TrackCommandOptions track;
  CLI::App* track_cmd = app.add_subcommand(
      "track",
      "Find, track and identify the markers in the session's clip (a video file or a folder "
      "of numbered images), or in each camera's clip; writes tracks.csv (with a camera column "
      "for several cameras).");
  track_cmd->add_option("session", track.session, "session YAML file")->required()->check(CLI::ExistingFile);
  track_cmd->add_option("-o,--out", track.out_dir, "output folder (created when missing)")->required();
  track_cmd->add_flag("-q,--quiet", common.quiet, "print nothing but errors and warnings");

  cli::FitCommandOptions fit;
  CLI::App* fit_cmd = app.add_subcommand(
      "fit",
      "Fit the free-flight model (ballistic CM, torque-free rotation, calibrated cameras) to "
      "identified marker tracks; writes results.json, frames.csv, residuals.csv and report.html.");
  fit_cmd->add_option("session", fit.session, "session YAML file")->required()->check(CLI::ExistingFile);
  fit_cmd->add_option("--tracks", fit.tracks, "tracks.csv with identified markers")
      ->required()->check(CLI::ExistingFile);
  fit_cmd->add_option("-o,--out", fit.out_dir, "output folder (created when missing)")->required();
  AddFitChoices(fit_cmd, &fit.choices);
  fit_cmd->add_option("--robust-scale-px", fit.robust_scale_px,
                      "Huber loss scale of the first, robust pass, px")
      ->capture_default_str()->check(CLI::PositiveNumber);
  fit_cmd->add_flag("-q,--quiet", common.quiet, "print nothing but errors and warnings");

  cli::ReportOptions report;
  CLI::App* report_cmd = app.add_subcommand(
      "report",
      "Rewrite DIR/report.html (one self-contained page: verdict, results with uncertainty, the "
      "body drawing, plots, diagnostics, method and provenance) from the folder's results.json, "
      "frames.csv, residuals.csv and tracks.csv alone; analyze and fit write it too.");
  report_cmd->add_option("dir", report.dir, "a results folder (written by analyze or fit)")
      ->required()->check(CLI::ExistingDirectory);
  report_cmd->add_flag("-q,--quiet", common.quiet, "print nothing but errors");

  cli::SimulateOptions sim;
  CLI::App* simulate = app.add_subcommand(
      "simulate",
      "Simulate a throw from a scenario: writes clip.mp4 (H.264), session.yaml, camera.yaml, "
      "body.yaml, truth.json and tracks.csv (exact marker pixels plus the scenario's noise); "
      "with several cameras, <name>.mp4 and <name>_camera.yaml for each. A camera set-up "
      "scenario (`kind: target-views`) writes target_views.mp4 (a target waved in front of the "
      "camera, for `calibrate`), placed.png (a target placed in the throw region, for "
      "`locate`) and truth.json.");
  simulate->add_option("scenario", sim.scenario, "scenario YAML file (see docs/scenario.md)")
      ->required()->check(CLI::ExistingFile);
  simulate->add_option("-o,--out", sim.out_dir, "output folder (created when missing)")->required();
  simulate->add_flag("--no-video", sim.no_video, "write the files but not clip.mp4");
  simulate->add_flag("-q,--quiet", common.quiet, "print nothing but errors");

  cli::CalibrateOptions calibrate;
  CLI::App* calibrate_cmd = app.add_subcommand(
      "calibrate",
      "Calibrate a camera from images of a planar target (checkerboard, circle grid or ChArUco "
      "board, described in a target YAML file): intrinsics and Brown-Conrady distortion by "
      "Zhang's method (OpenCV's calibrateCamera). Reads IMAGES (a folder of numbered images or "
      "a video file) and TARGET; writes DIR/camera.yaml (the contract's camera file, without a "
      "pose) and DIR/calibration.json (1-sigma of every term, rms per view, outlier views, the "
      "coverage map, orientation checks). Prints the same, with a warning when the views do not "
      "cover the image and a WEAK flag when the board's orientations cannot determine the "
      "intrinsics (all head-on, or all parallel).\n"
      "Example:  tumbletrace calibrate calib_images/ --target target.yaml -o cam/\n"
      "From a clip:  tumbletrace calibrate board.mp4 --target target.yaml --every 5 -o cam/\n"
      "Print a target first:  tumbletrace calibrate --target target.yaml --print board.svg\n"
      "Film 15-25 views: the board filling most of the image in most views and moved towards "
      "every corner in a few, tilted 30-55 degrees in different directions, sharp and evenly "
      "lit; a WEAK flag or a warning says when the views leave a term loose. From a clip, "
      "frames that repeat a pose already kept are skipped (--min-change).");
  calibrate_cmd->add_option("images", calibrate.images,
                            "folder of numbered images (png, tif, jpg) or a video file")
      ->check(CLI::ExistingPath);
  calibrate_cmd->add_option("--target", calibrate.target, "target YAML file (docs/files.md)")
      ->required()->check(CLI::ExistingFile);
  calibrate_cmd->add_option("-o,--out", calibrate.out_dir, "output folder (created when missing)");
  calibrate_cmd->add_option("--print", calibrate.print_svg,
                            "write the target as an SVG drawing at true size (mm) and stop");
  calibrate_cmd->add_option("--every", calibrate.every,
                            "use every n-th image or frame (a long clip: a few hundred frames "
                            "spread over it are plenty)")
      ->capture_default_str()->check(CLI::PositiveNumber);
  calibrate_cmd->add_option("--min-change", calibrate.min_change_px,
                            "skip a view whose features lie within this rms distance (px) of a "
                            "view already kept: a near-repeat adds no new pose, and frames of one "
                            "pose share blur and lighting (default: 2 % of the image diagonal; "
                            "0 keeps every view)")
      ->check(CLI::NonNegativeNumber);
  calibrate_cmd->add_flag("--estimate-k3", calibrate.estimate_k3,
                          "estimate the sixth-order radial term k3 too (wide-angle lenses); "
                          "held at 0 otherwise");
  calibrate_cmd->add_flag("--no-tangential", calibrate.no_tangential,
                          "hold the tangential terms p1, p2 at 0");
  calibrate_cmd->add_flag("-q,--quiet", common.quiet, "print nothing but errors and warnings");

  cli::LocateOptions locate;
  CLI::App* locate_cmd = app.add_subcommand(
      "locate",
      "The camera's pose in the world (world_to_camera) from one image of the target placed in "
      "the throw region, or from surveyed points. With --image: the world's origin is the "
      "target's first feature, z points up (against --down, gravity's direction in the target "
      "frame: x along the target's rows of features, y down its columns, z = x cross y, into "
      "the board), x is the target's x axis made level. With --points: world coordinates "
      "(z up) and their pixels in a YAML file. Pose by solvePnP refined by Levenberg-Marquardt; "
      "writes DIR/camera.yaml (the intrinsics of --camera, with world_to_camera) and "
      "DIR/pose.json (1-sigma of the rotation in deg and the translation in mm, the covariance, "
      "the camera centre in the world).\n"
      "Example:  tumbletrace locate --camera cam/camera.yaml --image board_in_place.png "
      "--target target.yaml --down +y -o cam_posed/\n"
      "          tumbletrace locate --camera cam/camera.yaml --points points.yaml -o cam_posed/");
  locate_cmd->add_option("--camera", locate.camera, "camera.yaml with the intrinsics (from calibrate)")
      ->required()->check(CLI::ExistingFile);
  locate_cmd->add_option("--image", locate.image, "one image of the target in the throw region")
      ->check(CLI::ExistingFile);
  locate_cmd->add_option("--target", locate.target, "the target's YAML file")->check(CLI::ExistingFile);
  locate_cmd->add_option("--down", locate.down,
                         "gravity's direction in the target frame: +x, -x, +y, -y, +z, -z or three "
                         "numbers 0,1,0 (a board hanging upright, printed side to the camera: +y)");
  locate_cmd->add_option("--points", locate.points,
                         "surveyed points: YAML with points: [{world: [x, y, z], pixel: [u, v]}]")
      ->check(CLI::ExistingFile);
  locate_cmd->add_option("-o,--out", locate.out_dir, "output folder (created when missing)")->required();
  locate_cmd->add_flag("-q,--quiet", common.quiet, "print nothing but errors");

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? 0 : static_cast<int>(ExitCode::kBadInput);
  }
  try {
    if (*simulate) return cli::RunSimulate(sim, common);
    if (*calibrate_cmd) return cli::RunCalibrate(calibrate, common);
    if (*locate_cmd) return cli::RunLocate(locate, common);
    if (*fit_cmd) return cli::RunFit(fit, common);
    if (*track_cmd) return cli::RunTrack(track, common);
    if (*analyze_cmd) {
      analyze.overlay = !no_overlay;
      return cli::RunAnalyze(analyze, common);
    }
    if (*report_cmd) return cli::RunReport(report, common);
  } catch (const tumbletrace::InputError& e) {
    std::cerr << "error: " << e.what() << "\n";
    return static_cast<int>(ExitCode::kBadInput);
  } catch (const tumbletrace::DataError& e) {
    std::cerr << "error: the data do not support " << (*calibrate_cmd || *locate_cmd ? "the result" : "a fit")
              << ": " << e.what() << "\n";
    return static_cast<int>(ExitCode::kUnsupportedData);
  } catch (const std::exception& e) {
    std::cerr << "internal error: " << e.what() << "\n";
    return static_cast<int>(ExitCode::kInternalError);
  }
  return static_cast<int>(ExitCode::kInternalError);
}
