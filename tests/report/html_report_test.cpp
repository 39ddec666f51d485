// report.html from a results folder: the verdict, the numbers with their units and
// uncertainty, "not determined" in place of a null, the plots, and bad folders refused.
#include "tumbletrace/report/html_report.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <memory>
#include <regex>
#include <string>

#include "support/air_scenarios.hpp"
#include "support/report_folder.hpp"
#include "support/scenarios.hpp"
#include "support/temp_dir.hpp"
#include "support/tumble_scenarios.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/sha256.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;

size_t Count(const std::string& text, const std::string& what) {
  size_t n = 0;
  for (size_t at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++n;
  return n;
}

json ReadJson(const fs::path& path) {
  std::ifstream in(path);
  return json::parse(in);
}

void WriteJson(const json& j, const fs::path& path) { std::ofstream(path) << j.dump(2); }

// One planar-spin throw (seed 41) fitted once for the suite: its CM's z is undetermined.
class HtmlReportTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = std::make_unique<testing::TempDir>("html_report");
    const Scenario s = testing::PlanarSpinScenario(0.2, 41);
    testing::WriteResultsFolder(s, testing::SimulateAndFit(s, testing::DefaultFitOptions(s)), dir_->path());
  }
  static void TearDownTestSuite() { dir_.reset(); }
  static const fs::path& dir() { return dir_->path(); }
  static std::unique_ptr<testing::TempDir> dir_;
};
std::unique_ptr<testing::TempDir> HtmlReportTest::dir_;

TEST(FormatWithSigma, KeepsTwoSignificantDigitsOfTheSigma) {
  EXPECT_EQ(FormatWithSigma(0.123456, 0.00012, 1e3), "123.46 ± 0.12");
  EXPECT_EQ(FormatWithSigma(1234.56, 25.0), "1235 ± 25");
  EXPECT_EQ(FormatWithSigma(-2.5, 0.0123), "-2.500 ± 0.012");
  EXPECT_EQ(FormatWithSigma(1.0, 0.0), "1.000 ± 0.000");
}

TEST_F(HtmlReportTest, ResultsJsonCarriesTheBodyAndTheInputFilesDigest) {
  const json r = ReadJson(dir() / "results.json");
  ASSERT_EQ(r.at("body").at("markers").size(), 6u);
  EXPECT_EQ(r["body"]["markers"][0].at("at_m").size(), 3u);
  const json& file = r.at("inputs").at("file_details").at(0);
  EXPECT_EQ(file.at("bytes").get<std::uintmax_t>(), fs::file_size(dir() / "body.yaml"));
  EXPECT_EQ(file.at("sha256"), Sha256HexOfFile(dir() / "body.yaml"));
}

TEST_F(HtmlReportTest, SoundFitPageShowsTheVerdictNumbersAndPlotsWithoutScriptsOrLinks) {
  const ReportData data = ReadReportData(dir());
  const Verdict verdict = AssessFit(data);
  EXPECT_NE(verdict.level, Verdict::Level::kPoor) << verdict.reasons.front();
  const std::string html = HtmlReport(data);
  EXPECT_EQ(html.find("verdict poor"), std::string::npos);
  // The CM's x as results.json has it, in mm with its sigma.
  const json& r = data.results;
  const std::string cm_x = FormatWithSigma(r["cm"]["body_m"][0].get<double>(), r["cm"]["sigma_m"][0].get<double>(), 1e3);
  EXPECT_NE(html.find(cm_x + " mm"), std::string::npos) << cm_x;
  // The spin axis's CM component is null: shown as not determined, with the reason.
  ASSERT_TRUE(r["cm"]["body_m"][2].is_null());
  EXPECT_NE(html.find("CM in the body frame, z</th><td><span class=\"nd\">not determined</span></td><td "
                      "class=\"note\">the throw spins"),
            std::string::npos);
  EXPECT_NE(html.find("rev/s"), std::string::npos);
  EXPECT_NE(html.find("rpm"), std::string::npos);
  // Plots: the body, the image plane, the CM path, residuals per frame and marker, spin,
  // energy, acceleration; the constant spin has no inertia for the momentum check.
  EXPECT_GE(Count(html, "<svg"), 8u);
  EXPECT_NE(html.find("Angular-momentum check:</b> <span class=\"nd\">not determined"), std::string::npos);
  EXPECT_EQ(html.find("<script"), std::string::npos);
  EXPECT_NE(html.find("xmlns=\"http://www.w3.org/2000/svg\""), std::string::npos);
  EXPECT_EQ(Count(html, "http"), Count(html, "http://www.w3.org/2000/svg"));  // no links out
  EXPECT_EQ(html.find(">nan"), std::string::npos);
  EXPECT_EQ(html.find(" nan "), std::string::npos);
  EXPECT_NE(html.find("Method"), std::string::npos);
  // The method section says what this fit's sigmas cover.
  EXPECT_NE(html.find("This fit's noise.</b> The sigmas allow for errors"), std::string::npos);
  EXPECT_NE(html.find(Sha256HexOfFile(dir() / "body.yaml")), std::string::npos);
}

TEST_F(HtmlReportTest, PoorFitIsSaidFirstWithItsReasons) {
  testing::TempDir poor("html_report_poor");
  for (const char* f : {"frames.csv", "residuals.csv"}) fs::copy_file(dir() / f, poor.path() / f);
  json r = ReadJson(dir() / "results.json");
  r["fit"]["rms_px"] = 4.2;
  r["fit"]["converged"] = false;
  r["diagnostics"]["flags"] = json::array({{{"kind", "release"}, {"first_frame", 10}, {"last_frame", 30},
                                            {"sentence", "The body is still in the hand until frame 30."}}});
  WriteJson(r, poor.path() / "results.json");
  const ReportData data = ReadReportData(poor.path());
  const Verdict verdict = AssessFit(data);
  ASSERT_EQ(verdict.level, Verdict::Level::kPoor);
  ASSERT_GE(verdict.reasons.size(), 3u);
  const std::string html = HtmlReport(data);
  const size_t box = html.find("<div class=\"verdict poor\"");
  ASSERT_NE(box, std::string::npos);
  EXPECT_LT(box, html.find("<h2>Results"));  // before any number
  EXPECT_NE(html.find("4.20 px"), std::string::npos);
  EXPECT_NE(html.find("did not converge"), std::string::npos);
  EXPECT_NE(html.find("still in the hand"), std::string::npos);
  EXPECT_NE(html.find("flag: release"), std::string::npos);  // marked on the time axes
}

// Gravity's direction appears among the results only when the fit measured it: a located
// camera's world (angle from -z), or a camera's own frame (angle from the image's down).
TEST_F(HtmlReportTest, GravitysDirectionIsShownWhenTheFitMeasuredIt) {
  const std::string given = HtmlReport(ReadReportData(dir()));
  EXPECT_EQ(given.find("gravity's direction"), std::string::npos);
  // (One camera: one image-plane plot, no camera named in its caption.)
  EXPECT_EQ(Count(given, "Image-plane tracks"), 1u);
  EXPECT_EQ(Count(given, "Camera 1 of"), 0u);
  testing::TempDir measured("html_report_gravity");
  for (const char* f : {"frames.csv", "residuals.csv"}) fs::copy_file(dir() / f, measured.path() / f);
  json r = ReadJson(dir() / "results.json");
  r["gravity"]["direction_world"] = {0.0, std::sin(0.7 * M_PI / 180), -std::cos(0.7 * M_PI / 180)};
  r["gravity"]["sigma_direction_deg"] = 0.147;
  WriteJson(r, measured.path() / "results.json");
  std::string html = HtmlReport(ReadReportData(measured.path()));
  EXPECT_NE(html.find("gravity's direction"), std::string::npos);
  EXPECT_NE(html.find("± 0.147 °"), std::string::npos) << html.substr(html.find("gravity's direction"), 300);
  EXPECT_NE(html.find("0.700 ° from the world's −z"), std::string::npos) << html.substr(html.find("gravity's direction"), 300);
  r["gravity"]["direction_world"] = {std::sin(0.2 * M_PI / 180), std::cos(0.2 * M_PI / 180), 0.0};
  WriteJson(r, measured.path() / "results.json");
  html = HtmlReport(ReadReportData(measured.path()));
  EXPECT_NE(html.find("0.200 ° from the image's down direction"), std::string::npos);
}

// With two cameras each has its own image-plane plot, its sightings and projections only.
TEST(HtmlReportTwoCameras, EachCameraHasItsImagePlanePlot) {
  testing::TempDir dir("html_report_two_cameras");
  const Scenario s = testing::TwoCameraScenario(0.2, 19);
  testing::WriteResultsFolder(s, testing::SimulateAndFit(s, testing::DefaultFitOptions(s)), dir.path());
  const std::string html = HtmlReport(ReadReportData(dir.path()));
  EXPECT_EQ(Count(html, "Camera 1 of 2: image-plane tracks"), 1u);
  EXPECT_EQ(Count(html, "Camera 2 of 2: image-plane tracks"), 1u);
  EXPECT_NE(html.find("id=\"image-0"), std::string::npos);
  EXPECT_NE(html.find("id=\"image-1"), std::string::npos);
}

// A real poor fit: the throw held by the hand before release and stopped by a net, fitted
// over the whole clip (no window search): the page says "poor" in its first box, before
// any number.
TEST(HtmlReportPoorWindow, WholeClipWithTheHandPhaseIsPoorOnTheFirstScreen) {
  const Scenario s = testing::HandAndNetScenario(0.2, 51);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  options.drag = DragChoice::kNone;
  testing::TempDir folder("html_report_hand");
  testing::WriteResultsFolder(s, testing::SimulateAndFit(s, options), folder.path());
  const ReportData data = ReadReportData(folder.path());
  const Verdict verdict = AssessFit(data);
  ASSERT_EQ(verdict.level, Verdict::Level::kPoor);
  for (const std::string& reason : verdict.reasons) std::printf("poor: %s\n", reason.c_str());
  const std::string html = HtmlReport(data);
  const size_t box = html.find("<div class=\"verdict poor\"");
  ASSERT_NE(box, std::string::npos);
  EXPECT_LT(box, html.find("<h2>Results"));
}

TEST_F(HtmlReportTest, RmsFarAboveTheTypicalFramesIsPoorEvenBelowOnePixel) {
  testing::TempDir odd("html_report_odd");
  for (const char* f : {"frames.csv", "residuals.csv"}) fs::copy_file(dir() / f, odd.path() / f);
  json r = ReadJson(dir() / "results.json");
  r["fit"]["rms_px"] = 0.9;  // the frames' own rms are about 0.2 px
  r["diagnostics"]["flags"] = json::array();
  WriteJson(r, odd.path() / "results.json");
  const Verdict verdict = AssessFit(ReadReportData(odd.path()));
  EXPECT_EQ(verdict.level, Verdict::Level::kPoor);
  EXPECT_NE(verdict.reasons.front().find("median frame"), std::string::npos);
}

// A copy of the suite's folder whose residuals.csv marks marker `marker`'s sightings as set
// aside in every `every`-th frame (one marker at a time: the others fit there), with a
// 'marker' flag over the fitted frames; returns the share set aside in all.
double SetAsideOneMarker(const fs::path& from, const fs::path& to, int marker, int every) {
  fs::copy_file(from / "frames.csv", to / "frames.csv");
  std::ifstream in(from / "residuals.csv");
  std::ofstream out(to / "residuals.csv");
  std::string line;
  std::getline(in, line);
  out << line << "\n";  // frame,time_s,marker,x_px,y_px,residual_x_px,residual_y_px,outlier,camera
  int rows = 0, set_aside = 0;
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    std::stringstream row(line);
    for (std::string cell; std::getline(row, cell, ',');) cells.push_back(cell);
    if (std::stoi(cells[2]) == marker && std::stoi(cells[0]) % every == 0) cells[7] = "1";
    set_aside += cells[7] == "1";
    ++rows;
    for (size_t i = 0; i < cells.size(); ++i) out << (i ? "," : "") << cells[i];
    out << "\n";
  }
  json r = ReadJson(from / "results.json");
  r["fit"]["outliers"] = set_aside;
  r["diagnostics"]["flags"] = json::array({{{"kind", "marker"},
                                            {"first_frame", r["window"]["first_frame"]},
                                            {"last_frame", r["window"]["last_frame"]},
                                            {"sentence", "Marker lies off the fitted motion."}}});
  WriteJson(r, to / "results.json");
  return static_cast<double>(set_aside) / rows;
}

// Sightings set aside one marker at a time (partly hidden, shadowed) leave the numbers to
// the rest: 8 % of them and a marker flag ask for caution, not a poor verdict; a quarter of
// them is poor.
TEST_F(HtmlReportTest, SightingsSetAsideOneMarkerAtATimeAskForCautionUnlessTheyAreAQuarter) {
  testing::TempDir some("html_report_some_set_aside");
  const double some_share = SetAsideOneMarker(dir(), some.path(), 3, 2);
  ASSERT_GT(some_share, 0.05);
  ASSERT_LT(some_share, 0.20);
  const Verdict caution = AssessFit(ReadReportData(some.path()));
  EXPECT_EQ(caution.level, Verdict::Level::kCaution);
  testing::TempDir many("html_report_many_set_aside");
  testing::TempDir step("html_report_step");
  SetAsideOneMarker(dir(), step.path(), 3, 1);
  const double many_share = SetAsideOneMarker(step.path(), many.path(), 5, 1);
  ASSERT_GT(many_share, 0.20);
  const Verdict poor = AssessFit(ReadReportData(many.path()));
  EXPECT_EQ(poor.level, Verdict::Level::kPoor);
}

// A marker's largest residual that results.json holds as null (an infinite residual, a
// point the model put behind the camera) is left out of the plot; the page is still written.
TEST_F(HtmlReportTest, NullLargestResidualOfAMarkerIsLeftOutOfThePlot) {
  testing::TempDir odd("html_report_null_max");
  for (const char* f : {"frames.csv", "residuals.csv"}) fs::copy_file(dir() / f, odd.path() / f);
  json r = ReadJson(dir() / "results.json");
  ASSERT_FALSE(r["diagnostics"]["per_marker"].empty());
  r["diagnostics"]["per_marker"][0]["max_px"] = nullptr;
  WriteJson(r, odd.path() / "results.json");
  const std::string html = HtmlReport(ReadReportData(odd.path()));
  EXPECT_NE(html.find("resmarker"), std::string::npos);
  for (const char* bad : {"\"nan", "nan\"", " nan", "nan "}) EXPECT_EQ(html.find(bad), std::string::npos) << bad;
}

TEST_F(HtmlReportTest, FlagsOutsideTheFittedFramesMarkTheWindowAndDoNotMakeTheFitPoor) {
  testing::TempDir ends("html_report_ends");
  for (const char* f : {"frames.csv", "residuals.csv"}) fs::copy_file(dir() / f, ends.path() / f);
  json r = ReadJson(dir() / "results.json");
  const int first = r["window"]["first_frame"], last = r["window"]["last_frame"];
  r["diagnostics"]["flags"] = json::array(
      {{{"kind", "release"}, {"first_frame", nullptr}, {"last_frame", first - 1}, {"sentence", "In the hand before."}},
       {{"kind", "impact"}, {"first_frame", last + 1}, {"last_frame", nullptr}, {"sentence", "The net after."}}});
  WriteJson(r, ends.path() / "results.json");
  const ReportData data = ReadReportData(ends.path());
  EXPECT_NE(AssessFit(data).level, Verdict::Level::kPoor);
  const std::string html = HtmlReport(data);
  EXPECT_NE(html.find("The net after."), std::string::npos);  // listed under the diagnostics
  EXPECT_NE(html.find("flag: impact"), std::string::npos);    // and on the time axes
}

TEST(HtmlReportTumble, FreeTopShowsInertiaRatiosAndTheAngularMomentumCheck) {
  const Scenario s = testing::FlipScenario(0.2, 3);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kFreeTop;
  testing::TempDir dir("html_report_tumble");
  testing::WriteResultsFolder(s, testing::SimulateAndFit(s, options), dir.path());
  const std::string html = HtmlReport(ReadReportData(dir.path()));
  EXPECT_NE(html.find("principal moments, I1/I3</th><td>0."), std::string::npos);
  EXPECT_NE(html.find("id=\"momentum-area\""), std::string::npos);
  EXPECT_EQ(html.find("the throw spins about an axis fixed in space"), std::string::npos);
}

TEST(HtmlReportInput, FolderWithoutResultsIsBadInputNamingTheFile) {
  testing::TempDir empty("html_report_empty");
  try {
    ReadReportData(empty.path());
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("results.json"), std::string::npos);
  }
}

TEST_F(HtmlReportTest, CsvWithoutAColumnOrWithTextIsBadInputNamingIt) {
  testing::TempDir bad("html_report_bad");
  fs::copy_file(dir() / "results.json", bad.path() / "results.json");
  fs::copy_file(dir() / "residuals.csv", bad.path() / "residuals.csv");
  std::ofstream(bad.path() / "frames.csv") << "frame,time_s\n1,0.001\n";
  try {
    ReadReportData(bad.path());
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("frames.csv: expected a column 'rms_px'"), std::string::npos) << e.what();
  }
  std::ofstream(bad.path() / "frames.csv") << "frame,time_s\n1,abc\n";
  try {
    ReadReportData(bad.path());
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("frames.csv:2: column 'time_s'"), std::string::npos) << e.what();
  }
}

TEST_F(HtmlReportTest, WriteHtmlReportWritesTheFileFromTheFolderAlone) {
  testing::TempDir copy("html_report_copy");
  for (const char* f : {"results.json", "frames.csv", "residuals.csv"}) fs::copy_file(dir() / f, copy.path() / f);
  WriteHtmlReport(copy.path());
  std::ifstream in(copy.path() / "report.html");
  const std::string html((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_EQ(html, HtmlReport(ReadReportData(dir())));
  EXPECT_FALSE(fs::exists(copy.path() / "report.html.partial"));
}

}  // namespace
}  // namespace tumbletrace
