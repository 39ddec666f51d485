// The result files of a fit (docs/files.md): results.json with the contract's keys,
// frames.csv (the fitted state per frame) and residuals.csv (per sighting), each written
// atomically. Every column name carries its unit.
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "tumbletrace/diagnose/diagnostics.hpp"
#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/summary.hpp"
#include "tumbletrace/model/body.hpp"

namespace tumbletrace {

// Where the results came from: shown in results.json under `inputs`.
struct Provenance {
  std::string tool_version;
  std::string command;
  std::vector<std::filesystem::path> input_files;
  double capture_fps = 0.0;
};

// `diagnostics` adds the window's search, the break flags, the residual tests and the
// gravity check (empty: a fit with no diagnostics, as in some tests).
nlohmann::json ResultsJson(const FitResult& fit, const FlightSummary& summary,
                           const Provenance& provenance,
                           const Diagnostics& diagnostics = Diagnostics{});

// Adds what the HTML report needs beyond the fit (docs/files.md): `body.markers` (id and
// centre `at_m` in the body frame), `body.references_m`, and `inputs.file_details` — per
// input file its `path`, size in `bytes` and `sha256`; a folder of images gets its total
// size and a `note` instead of a digest. Throws InputError naming a file that cannot be read.
void AddReportKeys(nlohmann::json* results, const Body& body,
                   const std::vector<std::filesystem::path>& input_files);

void WriteResultsJson(const nlohmann::json& results, const std::filesystem::path& path);
// frames.csv: per frame of the window, the fitted CM position and velocity, orientation,
// angular velocity and the reprojection rms of that frame's inlier sightings; with the
// diagnostics, the CM measured from the frame alone and its acceleration residual.
void WriteFramesCsv(const FitResult& fit, const FlightSummary& summary,
                    const std::filesystem::path& path,
                    const Diagnostics& diagnostics = Diagnostics{});
// residuals.csv: per sighting, observed and residual pixels and the outlier flag.
void WriteResidualsCsv(const FitResult& fit, const std::filesystem::path& path);

// The short plain-text summary printed by `fit` and `analyze`, with units.
std::string SummaryText(const FitResult& fit, const FlightSummary& summary,
                        const Diagnostics& diagnostics = Diagnostics{});

}  // namespace tumbletrace
