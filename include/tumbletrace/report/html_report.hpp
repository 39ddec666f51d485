// report.html: one self-contained page (inline SVG, no scripts, no network) generated from
// a results folder's files alone — results.json, frames.csv, residuals.csv and, when
// present, tracks.csv — so that `tumbletrace report DIR` rewrites it without the fit.
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/report/csv_table.hpp"

namespace tumbletrace {

// What the page is made from.
struct ReportData {
  nlohmann::json results;
  CsvTable frames;
  CsvTable residuals;
  std::optional<CsvTable> tracks;  // tracks.csv, absent after `fit` into another folder
};

// Reads DIR/results.json, DIR/frames.csv, DIR/residuals.csv and DIR/tracks.csv (optional).
// Throws InputError naming the missing or malformed file (and key, line or column).
ReportData ReadReportData(const std::filesystem::path& dir);

// The first screen's judgement of the fit, in words and a level.
struct Verdict {
  enum class Level { kSound, kCaution, kPoor };
  Level level = Level::kSound;
  std::string headline;              // "The fit looks sound" / "The fit is poor"
  std::vector<std::string> reasons;  // one plain sentence each
};
// From the fit's convergence, its rms against the typical frame's, the runs test and the
// break flags (see the method section of the page, and docs/files.md).
Verdict AssessFit(const ReportData& data);

// A value with its 1-sigma, rounded so that the sigma keeps two significant digits:
// "123.46 ± 0.12". Values are multiplied by `scale` first (e.g. 1e3 for m -> mm).
std::string FormatWithSigma(double value, double sigma, double scale = 1.0);

// The page's HTML text.
std::string HtmlReport(const ReportData& data);

// Reads the folder's files and writes DIR/report.html atomically.
void WriteHtmlReport(const std::filesystem::path& dir);

}  // namespace tumbletrace
