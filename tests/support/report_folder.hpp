// A results folder as `fit` writes it (results.json with the report's keys, frames.csv,
// residuals.csv) from a simulated throw fitted in the test, for the report's tests.
#pragma once

#include <filesystem>
#include <string>

#include "support/fit_helpers.hpp"
#include "tumbletrace/diagnose/diagnostics.hpp"
#include "tumbletrace/model/body.hpp"
#include "tumbletrace/report/results.hpp"

namespace tumbletrace::testing {

// Writes the fit's files into `dir` (which must exist); the body file and a session file
// are written too, as the inputs whose sizes and digests the results name.
inline void WriteResultsFolder(const Scenario& s, const Recovery& r, const std::filesystem::path& dir) {
  DiagnoseOptions diagnose;
  diagnose.expected_gravity_mps2 = s.gravity_world_mps2;
  std::vector<Camera> cameras;
  for (const ScenarioCamera& c : s.FilmingCameras()) cameras.push_back(c.camera);
  const Diagnostics diagnostics = Diagnose(r.fit, FreeFlightWindow{}, s.body, cameras, diagnose);
  WriteBodyYaml(s.body, dir / "body.yaml");
  Provenance provenance;
  provenance.tool_version = "test";
  provenance.command = "tumbletrace fit session.yaml --tracks tracks.csv -o out";
  provenance.input_files = {dir / "body.yaml"};
  provenance.capture_fps = s.capture_fps;
  nlohmann::json results = ResultsJson(r.fit, r.summary, provenance, diagnostics);
  AddReportKeys(&results, s.body, provenance.input_files);
  WriteFramesCsv(r.fit, r.summary, dir / "frames.csv", diagnostics);
  WriteResidualsCsv(r.fit, dir / "residuals.csv");
  WriteResultsJson(results, dir / "results.json");
}

}  // namespace tumbletrace::testing
