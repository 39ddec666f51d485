// The commands of `tumbletrace`, each a thin layer over library calls.
#pragma once

#include <filesystem>
#include <optional>
#include <string>

namespace tumbletrace::cli {

struct CommonOptions {
  bool quiet = false;
  std::string command_line;
};

// The fit's choices both `fit` and `analyze` offer.
struct FitChoices {
  bool estimate_gravity = false;
  std::string rotation = "auto";      // auto | constant-spin | symmetric | free
  bool inertia_from_parts = false;    // hold principal axes and moment ratios
  std::optional<int> first_frame;  // the free-flight window; the session's when absent
  std::optional<int> last_frame;
  std::optional<std::string> drag;    // auto | none | quadratic | quadratic+lift (session's)
  bool whole_clip = false;            // no window search: every frame
};

struct SimulateOptions {
  std::filesystem::path scenario;
  std::filesystem::path out_dir;
  bool no_video = false;
};
int RunSimulate(const SimulateOptions& options, const CommonOptions& common);

struct FitCommandOptions {
  std::filesystem::path session;
  std::filesystem::path tracks;
  std::filesystem::path out_dir;
  double robust_scale_px = 1.0;
  FitChoices choices;
};
int RunFit(const FitCommandOptions& options, const CommonOptions& common);

struct TrackCommandOptions {
  std::filesystem::path session;
  std::filesystem::path out_dir;
};
int RunTrack(const TrackCommandOptions& options, const CommonOptions& common);

struct AnalyzeOptions {
  std::filesystem::path session;
  std::filesystem::path out_dir;
  FitChoices choices;
  bool overlay = true;  // write overlay.mp4 (the clip with the fit drawn on it)
};
int RunAnalyze(const AnalyzeOptions& options, const CommonOptions& common);

struct ReportOptions {
  std::filesystem::path dir;          // a results folder: results.json and the CSV files
};
// Rewrites DIR/report.html from the folder's files alone.
int RunReport(const ReportOptions& options, const CommonOptions& common);

// Camera set-up (setup_commands.cpp).
struct CalibrateOptions {
  std::filesystem::path images;       // a folder of images or a video file
  std::filesystem::path target;       // target.yaml
  std::filesystem::path out_dir;
  std::filesystem::path print_svg;    // --print: write the target as SVG instead
  int every = 1;                      // use every n-th image
  double min_change_px = -1.0;        // near-repeat distance; < 0: the default (2 % of the diagonal)
  bool estimate_k3 = false;
  bool no_tangential = false;
};
int RunCalibrate(const CalibrateOptions& options, const CommonOptions& common);

struct LocateOptions {
  std::filesystem::path camera;       // camera.yaml with the intrinsics
  std::filesystem::path image;        // one image of the target in the throw region
  std::filesystem::path target;       // its target.yaml
  std::string down;                   // gravity's direction in the target frame
  std::filesystem::path points;       // or: surveyed points
  std::filesystem::path out_dir;
};
int RunLocate(const LocateOptions& options, const CommonOptions& common);

}  // namespace tumbletrace::cli
