// The result files of a fit (../shared/CONTRACT.md): results.json with the contract's keys,
// frames.csv (the fitted state per frame) and residuals.csv (per sighting), each written
// atomically. Every column name carries its unit.
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/summary.hpp"

namespace tumbletrace {

// Where the results came from: shown in results.json under `inputs`.
struct Provenance {
  std::string tool_version;
  std::string command;
  std::vector<std::filesystem::path> input_files;
  double capture_fps = 0.0;
};

nlohmann::json ResultsJson(const FitResult& fit, const FlightSummary& summary,
                           const Provenance& provenance);

void WriteResultsJson(const nlohmann::json& results, const std::filesystem::path& path);
// frames.csv: per frame of the window, the fitted CM position and velocity, orientation,
// angular velocity and the reprojection rms of that frame's inlier sightings.
void WriteFramesCsv(const FitResult& fit, const FlightSummary& summary,
                    const std::filesystem::path& path);
// residuals.csv: per sighting, observed and residual pixels and the outlier flag.
void WriteResidualsCsv(const FitResult& fit, const std::filesystem::path& path);

// The short plain-text summary printed by `fit` and `analyze`, with units.
std::string SummaryText(const FitResult& fit, const FlightSummary& summary);

}  // namespace tumbletrace
