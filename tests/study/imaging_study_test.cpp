// The imaging study: seeded realistic throws (tests/support/realistic_throws.hpp) simulated
// as H.264 clips, analysed by the real binary (`analyze --no-overlay`) and scored against
// the simulator's truth: the 95 % coverage of each observable CM component and inertia
// ratio, both window ends within +/-2 frames, the share of sightings set aside where
// nothing touches the body, and the verdict. The same throws are run with markers of three
// looks side by side: shaded spheres with self-occlusion and shadows, flat dots, and
// spheres always fully visible.
//
// `long`: TUMBLETRACE_STUDY_THROWS (default 100) throws per look, two at a time;
// TUMBLETRACE_STUDY_OUT=DIR keeps every throw's folder and writes study.csv there;
// TUMBLETRACE_STUDY_BINARY=FILE analyses with another build of the tool (a copy kept
// aside, so that rebuilding during a study does not change its remaining throws);
// TUMBLETRACE_STUDY_LOOKS=shaded-spheres,flat-dots,always-visible (any of them) limits the looks run.
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>
#include <cstdlib>
#include <fmt/format.h>
#include <fstream>
#include <future>
#include <iostream>
#include <mutex>
#include <nlohmann/json.hpp>

#include "support/realistic_throws.hpp"
#include "support/temp_dir.hpp"
#include "tumbletrace/report/html_report.hpp"
#include "tumbletrace/sim/simulate.hpp"

namespace tumbletrace {
namespace {

using nlohmann::json;
using testing::ThrowKind;

// 97.5 % quantile of the standard normal: the half-width of a 95 % interval in sigmas.
constexpr double kZ95 = 1.959964;

struct ThrowOutcome {
  int seed = 0;
  ThrowKind kind = ThrowKind::kPlanar;
  int exit_code = -1;
  // Per observable CM component / inertia ratio: |error| / sigma.
  std::vector<double> cm_z;
  std::vector<double> ratio_z;
  int window_first_error = 0;
  int window_last_error = 0;
  double set_aside_fraction = 0.0;
  double rms_px = 0.0;
  std::string verdict;
  std::string rotation_model;
};

json ReadJson(const std::filesystem::path& path) {
  std::ifstream in(path);
  return json::parse(in);
}

ThrowOutcome RunThrow(int seed, ThrowKind kind, testing::MarkerLook look, const std::filesystem::path& dir) {
  ThrowOutcome out;
  out.seed = seed;
  out.kind = kind;
  Scenario scenario = testing::RealisticThrow(static_cast<std::uint64_t>(seed), kind);
  testing::ApplyLook(&scenario, look);
  std::filesystem::create_directories(dir);
  WriteSimulation(SimulateFlight(scenario), dir, {});
  const char* binary = std::getenv("TUMBLETRACE_STUDY_BINARY");
  const std::string command = fmt::format("'{}' analyze '{}' -o '{}' --no-overlay -q > '{}' 2>&1",
                                          binary ? binary : TUMBLETRACE_BINARY,
                                          (dir / "session.yaml").string(), (dir / "out").string(),
                                          (dir / "analyze.log").string());
  const int status = std::system(command.c_str());
  out.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  if (out.exit_code != 0) return out;

  const json truth = ReadJson(dir / "truth.json");
  const json results = ReadJson(dir / "out" / "results.json");
  for (int k = 0; k < 3; ++k) {
    const json& sigma = results["cm"]["sigma_m"][k];
    if (sigma.is_null()) continue;
    const double error = results["cm"]["body_m"][k].get<double>() - truth["cm"]["body_m"][k].get<double>();
    out.cm_z.push_back(std::abs(error) / sigma.get<double>());
  }
  if (results["inertia"]["ratios"].is_array()) {
    Eigen::Matrix3d inertia;
    for (int r = 0; r < 3; ++r) {
      for (int c = 0; c < 3; ++c) inertia(r, c) = truth["inertia_about_cm_kgm2"][r][c].get<double>();
    }
    const Eigen::Vector3d moments = Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d>(inertia).eigenvalues();
    for (int k = 0; k < 2; ++k) {
      const double error = results["inertia"]["ratios"][k].get<double>() - moments[k] / moments[2];
      out.ratio_z.push_back(std::abs(error) / results["inertia"]["sigma_ratios"][k].get<double>());
    }
  }
  out.window_first_error = results["window"]["first_frame"].get<int>() - truth["window"]["first_frame"].get<int>();
  out.window_last_error = results["window"]["last_frame"].get<int>() - truth["window"]["last_frame"].get<int>();
  const double observations = results["fit"]["observations"].get<double>();
  out.set_aside_fraction = observations > 0 ? results["fit"]["outliers"].get<double>() / observations : 0.0;
  out.rms_px = results["fit"]["rms_px"].get<double>();
  out.rotation_model = results["rotation"]["model"].get<std::string>();
  const Verdict verdict = AssessFit(ReadReportData(dir / "out"));
  out.verdict = verdict.level == Verdict::Level::kPoor      ? "poor"
                : verdict.level == Verdict::Level::kCaution ? "caution"
                                                            : "sound";
  return out;
}

struct LookSummary {
  int throws = 0;
  int failed = 0;
  int cm_components = 0;
  int cm_covered = 0;
  int ratios = 0;
  int ratios_covered = 0;
  int windows_within_2 = 0;
  int untouched = 0;                // throws without hand or impact
  double untouched_set_aside = 0.0;  // their mean share of sightings set aside
  int poor = 0;
  int poor_but_within_3_sigma = 0;

  double CmCoverage() const { return cm_components ? static_cast<double>(cm_covered) / cm_components : 0.0; }
  double RatioCoverage() const { return ratios ? static_cast<double>(ratios_covered) / ratios : 0.0; }
  double WindowShare() const {
    return throws - failed ? static_cast<double>(windows_within_2) / (throws - failed) : 0.0;
  }
  double SetAside() const { return untouched ? untouched_set_aside / untouched : 0.0; }
};

LookSummary Summarise(const std::vector<ThrowOutcome>& outcomes) {
  LookSummary s;
  for (const ThrowOutcome& o : outcomes) {
    ++s.throws;
    if (o.exit_code != 0) {
      ++s.failed;
      continue;
    }
    bool within_3 = true;
    for (double z : o.cm_z) {
      ++s.cm_components;
      s.cm_covered += z <= kZ95;
      within_3 &= z <= 3.0;
    }
    for (double z : o.ratio_z) {
      ++s.ratios;
      s.ratios_covered += z <= kZ95;
      within_3 &= z <= 3.0;
    }
    s.windows_within_2 += std::abs(o.window_first_error) <= 2 && std::abs(o.window_last_error) <= 2;
    if (o.kind != ThrowKind::kRelease && o.kind != ThrowKind::kImpact) {
      ++s.untouched;
      s.untouched_set_aside += o.set_aside_fraction;
    }
    if (o.verdict == "poor") {
      ++s.poor;
      s.poor_but_within_3_sigma += within_3;
    }
  }
  return s;
}

int StudyThrows() {
  const char* text = std::getenv("TUMBLETRACE_STUDY_THROWS");
  return text ? std::max(1, std::atoi(text)) : 100;
}

std::vector<ThrowOutcome> RunLook(testing::MarkerLook look, int throws, const std::filesystem::path& root) {
  std::vector<ThrowOutcome> outcomes(throws);
  std::mutex print;
  const auto worker = [&](int first) {
    for (int i = first; i < throws; i += 2) {
      const ThrowKind kind = testing::StudyThrowKind(i);
      outcomes[i] = RunThrow(1000 + i, kind, look, root / fmt::format("{}_{:03d}", testing::MarkerLookName(look), i));
      std::lock_guard<std::mutex> lock(print);
      const ThrowOutcome& o = outcomes[i];
      std::string cm;
      for (double z : o.cm_z) cm += fmt::format(" {:.2f}", z);
      std::string ratios;
      for (double z : o.ratio_z) ratios += fmt::format(" {:.2f}", z);
      std::cout << fmt::format("{} {:3d} {:8s} exit {} cm_z[{} ] ratio_z[{} ] window {:+d}/{:+d} set-aside {:.1f} % "
                               "rms {:.3f} {} {}\n",
                               testing::MarkerLookName(look), i, testing::ThrowKindName(kind), o.exit_code, cm, ratios,
                               o.window_first_error, o.window_last_error, 100 * o.set_aside_fraction, o.rms_px,
                               o.rotation_model, o.verdict)
                << std::flush;
    }
  };
  auto second = std::async(std::launch::async, worker, 1);
  worker(0);
  second.get();
  return outcomes;
}

void WriteStudyCsv(const std::vector<std::pair<testing::MarkerLook, std::vector<ThrowOutcome>>>& looks,
                   const std::filesystem::path& path) {
  std::ofstream csv(path);
  csv << "look,throw,kind,exit,cm_z_max,ratio_z_max,window_first_error,window_last_error,set_aside,rms_px,model,verdict\n";
  for (const auto& [look, outcomes] : looks) {
    for (const ThrowOutcome& o : outcomes) {
      const double cm_max = o.cm_z.empty() ? 0.0 : *std::max_element(o.cm_z.begin(), o.cm_z.end());
      const double ratio_max = o.ratio_z.empty() ? 0.0 : *std::max_element(o.ratio_z.begin(), o.ratio_z.end());
      csv << fmt::format("{},{},{},{},{:.3f},{:.3f},{},{},{:.4f},{:.4f},{},{}\n", testing::MarkerLookName(look),
                         o.seed, testing::ThrowKindName(o.kind), o.exit_code, cm_max, ratio_max, o.window_first_error,
                         o.window_last_error, o.set_aside_fraction, o.rms_px, o.rotation_model, o.verdict);
    }
  }
}

TEST(ImagingStudy, RealisticThrowsCoverTheTruthWithEachMarkerLook) {
  const int throws = StudyThrows();
  std::optional<testing::TempDir> temp;
  std::filesystem::path root;
  if (const char* keep = std::getenv("TUMBLETRACE_STUDY_OUT")) {
    root = keep;
    std::filesystem::create_directories(root);
  } else {
    temp.emplace("imaging_study");
    root = temp->path();
  }
  std::vector<std::pair<testing::MarkerLook, std::vector<ThrowOutcome>>> looks;
  const char* chosen = std::getenv("TUMBLETRACE_STUDY_LOOKS");
  for (testing::MarkerLook look : {testing::MarkerLook::kShadedSpheres, testing::MarkerLook::kFlatDots,
                                   testing::MarkerLook::kAlwaysVisible}) {
    if (chosen && std::string(chosen).find(testing::MarkerLookName(look)) == std::string::npos) continue;
    looks.emplace_back(look, RunLook(look, throws, root));
  }
  ASSERT_FALSE(looks.empty()) << "TUMBLETRACE_STUDY_LOOKS names none of the looks";
  WriteStudyCsv(looks, root / "study.csv");
  std::cout << "look            throws failed  CM cover  ratio cover  windows+-2  set aside  poor (of which within 3 sigma)\n";
  for (const auto& [look, outcomes] : looks) {
    const LookSummary s = Summarise(outcomes);
    std::cout << fmt::format("{:15s} {:6d} {:6d}  {:.3f} ({:3d})  {:.3f} ({:3d})  {:.3f}       {:.2f} %    {} ({})\n",
                             testing::MarkerLookName(look), s.throws, s.failed, s.CmCoverage(), s.cm_components,
                             s.RatioCoverage(), s.ratios, s.WindowShare(), 100 * s.SetAside(), s.poor,
                             s.poor_but_within_3_sigma);
  }
  // The bounds, for the realistic look (the other two are printed beside it).
  if (looks.front().first != testing::MarkerLook::kShadedSpheres) return;
  const LookSummary realistic = Summarise(looks.front().second);
  EXPECT_EQ(realistic.failed, 0);
  EXPECT_GE(realistic.CmCoverage(), 0.92);
  EXPECT_LE(realistic.CmCoverage(), 0.98);
  if (realistic.ratios >= 20) {
    EXPECT_GE(realistic.RatioCoverage(), 0.92);
    EXPECT_LE(realistic.RatioCoverage(), 0.98);
  }
  EXPECT_GE(realistic.WindowShare(), 0.95);
  EXPECT_LE(realistic.SetAside(), 0.05);
  EXPECT_EQ(realistic.poor_but_within_3_sigma, 0);
}

}  // namespace
}  // namespace tumbletrace
