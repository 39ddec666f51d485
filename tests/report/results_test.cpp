#include "tumbletrace/report/results.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "support/air_scenarios.hpp"
#include "support/fit_helpers.hpp"
#include "support/scenarios.hpp"
#include "support/temp_dir.hpp"
#include "support/tumble_scenarios.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;

// ---- shape checks -------------------------------------------------------------------

::testing::AssertionResult IsNumberArray(const json& j, size_t n) {
  if (!j.is_array() || j.size() != n) {
    return ::testing::AssertionFailure() << "expected an array of " << n << ", got " << j.dump();
  }
  for (const json& v : j) {
    if (!v.is_number()) return ::testing::AssertionFailure() << "non-number in " << j.dump();
  }
  return ::testing::AssertionSuccess();
}

// A 3-vector whose entries are numbers, except those at `null_at`, which must be null.
::testing::AssertionResult IsVector3WithNulls(const json& j, std::vector<int> null_at) {
  if (!j.is_array() || j.size() != 3) {
    return ::testing::AssertionFailure() << "expected an array of 3, got " << j.dump();
  }
  for (int i = 0; i < 3; ++i) {
    const bool want_null = std::find(null_at.begin(), null_at.end(), i) != null_at.end();
    if (want_null && !j[i].is_null()) {
      return ::testing::AssertionFailure() << "entry " << i << " should be null in " << j.dump();
    }
    if (!want_null && !j[i].is_number()) {
      return ::testing::AssertionFailure() << "entry " << i << " should be a number in " << j.dump();
    }
  }
  return ::testing::AssertionSuccess();
}

::testing::AssertionResult IsNumberMatrix3(const json& j) {
  if (!j.is_array() || j.size() != 3) {
    return ::testing::AssertionFailure() << "expected 3 rows, got " << j.dump();
  }
  for (const json& row : j) {
    if (!IsNumberArray(row, 3)) return ::testing::AssertionFailure() << "bad row in " << j.dump();
  }
  return ::testing::AssertionSuccess();
}

// ---- CSV ------------------------------------------------------------------------------

std::vector<std::string> SplitCsvLine(const std::string& line) {
  std::vector<std::string> fields;
  size_t start = 0;
  while (true) {
    const size_t comma = line.find(',', start);
    fields.push_back(line.substr(start, comma == std::string::npos ? std::string::npos : comma - start));
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return fields;
}

struct Csv {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
  int Column(const std::string& name) const {
    const auto it = std::find(header.begin(), header.end(), name);
    return it == header.end() ? -1 : static_cast<int>(it - header.begin());
  }
};

Csv ReadCsv(const fs::path& path) {
  Csv csv;
  std::ifstream in(path);
  std::string line;
  if (std::getline(in, line)) csv.header = SplitCsvLine(line);
  while (std::getline(in, line)) {
    if (!line.empty()) csv.rows.push_back(SplitCsvLine(line));
  }
  return csv;
}

bool ParsesAsNumber(const std::string& text) {
  if (text.empty()) return false;
  std::istringstream in(text);
  double value = 0.0;
  in >> value;
  return !in.fail() && in.eof() && std::isfinite(value);
}

// A column name carries its unit, or names a dimensionless quantity (a count, an id, a flag
// or a quaternion component).
bool NameCarriesUnit(const std::string& name) {
  static const std::vector<std::string> kUnitSuffixes = {"_s",     "_m",   "_mps",  "_mps2",
                                                         "_radps", "_px",  "_deg",  "_kg",
                                                         "_rev_per_s", "_per_m"};
  static const std::vector<std::string> kDimensionless = {"frame", "marker", "markers", "track",
                                                          "outlier", "camera", "q_w", "q_x", "q_y",
                                                          "q_z"};
  for (const std::string& suffix : kUnitSuffixes) {
    if (name.size() > suffix.size() && name.ends_with(suffix)) return true;
  }
  return std::find(kDimensionless.begin(), kDimensionless.end(), name) != kDimensionless.end();
}

// ---- the shared fit -----------------------------------------------------------------

// One planar-spin throw (250 frames, 6 markers, all visible, seed 41), simulated and fitted
// once for the suite: the spin axis (body z) stays along the camera's line of sight (world
// y), so c_z and the launch position's world y are undetermined.
class ResultsFilesTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    const Scenario s = testing::PlanarSpinScenario(0.2, 41);
    recovery_ = std::make_unique<testing::Recovery>(
        testing::SimulateAndFit(s, testing::DefaultFitOptions(s)));
    Provenance provenance;
    provenance.tool_version = "test";
    provenance.command = "report_test";
    provenance.input_files = {"session.yaml", "camera.yaml", "body.yaml", "tracks.csv"};
    provenance.capture_fps = s.capture_fps;
    results_ = std::make_unique<json>(ResultsJson(recovery_->fit, recovery_->summary, provenance));
  }
  static void TearDownTestSuite() {
    recovery_.reset();
    results_.reset();
  }

  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() /
              ("tumbletrace_report_" + std::string(info->name()) + "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_);
  }
  void TearDown() override { fs::remove_all(folder_); }

  const FitResult& fit() const { return recovery_->fit; }
  const FlightSummary& summary() const { return recovery_->summary; }
  const json& results() const { return *results_; }

  static std::unique_ptr<testing::Recovery> recovery_;
  static std::unique_ptr<json> results_;
  fs::path folder_;
};

std::unique_ptr<testing::Recovery> ResultsFilesTest::recovery_;
std::unique_ptr<json> ResultsFilesTest::results_;

TEST_F(ResultsFilesTest, CmKeysHaveTheContractShapesWithTheSpinAxisNull) {
  const json& cm = results().at("cm");
  EXPECT_TRUE(IsVector3WithNulls(cm.at("body_m"), {2}));
  EXPECT_TRUE(IsVector3WithNulls(cm.at("sigma_m"), {2}));
  EXPECT_GT(cm["sigma_m"][0].get<double>(), 0.0);
  EXPECT_GT(cm["sigma_m"][1].get<double>(), 0.0);

  const json& cov = cm.at("covariance_m2");
  ASSERT_TRUE(cov.is_array());
  ASSERT_EQ(cov.size(), 3u);
  for (int r = 0; r < 3; ++r) {
    ASSERT_TRUE(cov[r].is_array());
    ASSERT_EQ(cov[r].size(), 3u);
    for (int c = 0; c < 3; ++c) {
      // Row and column z (the unobservable axis) are null; the rest are numbers.
      if (r == 2 || c == 2) {
        EXPECT_TRUE(cov[r][c].is_null()) << r << "," << c;
      } else {
        EXPECT_TRUE(cov[r][c].is_number()) << r << "," << c;
      }
    }
  }
  EXPECT_NEAR(cov[0][1].get<double>(), cov[1][0].get<double>(), 1e-15);
  for (int i = 0; i < 2; ++i) {
    EXPECT_NEAR(std::sqrt(cov[i][i].get<double>()), cm["sigma_m"][i].get<double>(), 1e-12);
  }

  const json& null_dirs = cm.at("unobservable_body");
  ASSERT_TRUE(null_dirs.is_array());
  ASSERT_EQ(null_dirs.size(), 1u);
  ASSERT_TRUE(IsNumberArray(null_dirs[0], 3));
  const Eigen::Vector3d u(null_dirs[0][0].get<double>(), null_dirs[0][1].get<double>(),
                          null_dirs[0][2].get<double>());
  EXPECT_NEAR(u.norm(), 1.0, 1e-9);
  EXPECT_GT(std::abs(u.z()), 0.99);  // the spin axis, body z

  const json& refs = cm.at("from_references");
  ASSERT_TRUE(refs.is_object());
  EXPECT_EQ(refs.size(), 2u);
  const std::map<std::string, double> ref_x_m = {{"grip_end", 0.0}, {"head_face", 0.300}};
  for (const auto& [name, x_m] : ref_x_m) {
    ASSERT_TRUE(refs.contains(name)) << name;
    const json& r = refs[name];
    EXPECT_TRUE(IsVector3WithNulls(r.at("vector_m"), {2})) << name;
    ASSERT_TRUE(r.contains("distance_m")) << name;
    // A distance needs all three components; z is undetermined.
    EXPECT_TRUE(r["distance_m"].is_null()) << name;
    EXPECT_NEAR(r["vector_m"][0].get<double>(), cm["body_m"][0].get<double>() - x_m, 1e-12);
  }
}

TEST_F(ResultsFilesTest, LaunchSpinAndWindowKeysHaveTheContractShapes) {
  const json& launch = results().at("launch");
  EXPECT_TRUE(launch.at("time_s").is_number());
  // The launch position is open along the world y axis (the spin axis, the line of sight).
  EXPECT_TRUE(IsVector3WithNulls(launch.at("position_m"), {1}));
  EXPECT_TRUE(IsNumberArray(launch.at("velocity_mps"), 3));
  ASSERT_TRUE(IsNumberArray(launch.at("sigma_velocity_mps"), 3));
  for (const json& s : launch["sigma_velocity_mps"]) EXPECT_GT(s.get<double>(), 0.0);

  const json& spin = results().at("spin");
  EXPECT_TRUE(IsNumberArray(spin.at("omega_world_radps"), 3));
  EXPECT_TRUE(IsNumberArray(spin.at("omega_body_radps"), 3));
  ASSERT_TRUE(spin.at("rate_rev_per_s").is_number());
  EXPECT_NEAR(spin["rate_rev_per_s"].get<double>(), 5.0, 0.01);
  ASSERT_TRUE(spin.at("sigma_rate_rev_per_s").is_number());
  EXPECT_GT(spin["sigma_rate_rev_per_s"].get<double>(), 0.0);

  const json& window = results().at("window");
  ASSERT_TRUE(window.at("first_frame").is_number_integer());
  ASSERT_TRUE(window.at("last_frame").is_number_integer());
  EXPECT_EQ(window["first_frame"].get<int>(), 0);
  EXPECT_EQ(window["last_frame"].get<int>(), 249);
}

TEST_F(ResultsFilesTest, ModelInertiaDragAndFitKeysHaveTheContractShapes) {
  const json& j = results();
  ASSERT_TRUE(j.at("rotation").at("model").is_string());
  EXPECT_FALSE(j["rotation"]["model"].get<std::string>().empty());

  const json& inertia = j.at("inertia");
  ASSERT_TRUE(inertia.contains("ratios"));
  EXPECT_TRUE(inertia["ratios"].is_null());  // a constant-spin fit does not estimate them
  ASSERT_TRUE(inertia.contains("sigma_ratios"));
  EXPECT_TRUE(inertia["sigma_ratios"].is_null() || IsNumberArray(inertia["sigma_ratios"], 2))
      << inertia["sigma_ratios"].dump();
  ASSERT_TRUE(inertia.contains("axes_body"));
  EXPECT_TRUE(inertia["axes_body"].is_null() || IsNumberMatrix3(inertia["axes_body"]))
      << inertia["axes_body"].dump();

  const json& drag = j.at("drag");
  EXPECT_EQ(drag.at("model"), "none");
  ASSERT_TRUE(drag.contains("k_per_m"));
  EXPECT_TRUE(drag["k_per_m"].is_null());

  const json& f = j.at("fit");
  ASSERT_TRUE(f.at("converged").is_boolean());
  EXPECT_TRUE(f["converged"].get<bool>());
  ASSERT_TRUE(f.at("rms_px").is_number());
  EXPECT_NEAR(f["rms_px"].get<double>(), 0.2, 0.02);
  ASSERT_TRUE(f.at("observations").is_number_integer());
  EXPECT_EQ(f["observations"].get<int>(), 1500);  // 250 frames x 6 markers
  ASSERT_TRUE(f.at("outliers").is_number_integer());
  // Gaussian noise alone leaves a sighting beyond the 4.29-sigma threshold now and then.
  EXPECT_EQ(f["outliers"].get<int>(), fit().outliers);
  EXPECT_LE(f["outliers"].get<int>(), 3);
  ASSERT_TRUE(f.at("model").is_string());
  EXPECT_FALSE(f["model"].get<std::string>().empty());

  // What the sigmas cover: the planar throw leaves c_z undetermined, so its factor is null;
  // independent noise of one level gives factors near 1 and rho near 0.
  const json& noise = f.at("noise_model");
  EXPECT_EQ(noise.at("kind"), "ar1-sandwich");
  EXPECT_EQ(noise.at("series").get<int>(), 12);  // 6 markers x 2 coordinates
  const json& factors = noise.at("variance_factor_cm");
  ASSERT_EQ(factors.size(), 3u);
  for (int i = 0; i < 2; ++i) EXPECT_NEAR(factors[i].get<double>(), 1.0, 0.15) << i;
  EXPECT_TRUE(factors[2].is_null());
  EXPECT_LT(std::abs(noise.at("median_rho").get<double>()), 0.1);
  EXPECT_GE(noise.at("max_rho").get<double>(), noise.at("median_rho").get<double>());
  EXPECT_NE(noise.at("sentence").get<std::string>().find("AR(1)"), std::string::npos);
}

TEST_F(ResultsFilesTest, WarningsSayWhyTheCmIsUndetermined) {
  const json& warnings = results().at("warnings");
  ASSERT_TRUE(warnings.is_array());
  ASSERT_FALSE(warnings.empty());
  bool explains_cm = false;
  for (const json& w : warnings) {
    ASSERT_TRUE(w.is_string());
    const std::string text = w.get<std::string>();
    explains_cm |= text.find("CM") != std::string::npos &&
                   (text.find("not determined") != std::string::npos ||
                    text.find("undetermined") != std::string::npos);
  }
  EXPECT_TRUE(explains_cm) << warnings.dump(2);
}

TEST_F(ResultsFilesTest, WrittenResultsJsonReadsBackUnchanged) {
  const fs::path path = folder_ / "results.json";
  WriteResultsJson(results(), path);
  std::ifstream in(path);
  const json back = json::parse(in);
  EXPECT_EQ(back, results());
}

TEST_F(ResultsFilesTest, FramesCsvHasUnitsARowPerFrameAndLeavesTheOpenAxisEmpty) {
  const fs::path path = folder_ / "frames.csv";
  WriteFramesCsv(fit(), summary(), path);
  const Csv csv = ReadCsv(path);
  ASSERT_FALSE(csv.header.empty());
  for (const std::string& name : csv.header) EXPECT_TRUE(NameCarriesUnit(name)) << name;
  ASSERT_EQ(csv.rows.size(), 250u);

  const int frame = csv.Column("frame"), x = csv.Column("cm_x_m"), y = csv.Column("cm_y_m"),
            z = csv.Column("cm_z_m");
  ASSERT_GE(frame, 0);
  ASSERT_GE(x, 0);
  ASSERT_GE(y, 0);
  ASSERT_GE(z, 0);
  for (size_t i = 0; i < csv.rows.size(); ++i) {
    const auto& row = csv.rows[i];
    ASSERT_EQ(row.size(), csv.header.size()) << "row " << i;
    EXPECT_EQ(row[frame], std::to_string(i));
    EXPECT_TRUE(ParsesAsNumber(row[x])) << "row " << i << ": '" << row[x] << "'";
    EXPECT_TRUE(ParsesAsNumber(row[z])) << "row " << i << ": '" << row[z] << "'";
    EXPECT_EQ(row[y], "") << "row " << i;  // world y: the spin axis, along the line of sight
  }
}

TEST_F(ResultsFilesTest, ResidualsCsvHasUnitsAndARowPerSighting) {
  const fs::path path = folder_ / "residuals.csv";
  WriteResidualsCsv(fit(), path);
  const Csv csv = ReadCsv(path);
  ASSERT_FALSE(csv.header.empty());
  for (const std::string& name : csv.header) EXPECT_TRUE(NameCarriesUnit(name)) << name;
  ASSERT_EQ(csv.rows.size(), 1500u);
  for (const auto& row : csv.rows) {
    ASSERT_EQ(row.size(), csv.header.size());
    for (const std::string& field : row) ASSERT_TRUE(ParsesAsNumber(field)) << field;
  }
  const int outlier = csv.Column("outlier");
  ASSERT_GE(outlier, 0);
  int flagged = 0;
  for (const auto& row : csv.rows) {
    EXPECT_TRUE(row[outlier] == "0" || row[outlier] == "1") << row[outlier];
    flagged += row[outlier] == "1";
  }
  EXPECT_EQ(flagged, fit().outliers);
}

TEST_F(ResultsFilesTest, SummaryTextNamesTheUndeterminedAxisAndUnits) {
  const std::string text = SummaryText(fit(), summary());
  EXPECT_NE(text.find("undetermined"), std::string::npos) << text;
  EXPECT_NE(text.find("mm"), std::string::npos) << text;
  EXPECT_NE(text.find("m/s"), std::string::npos) << text;
  EXPECT_NE(text.find("rev/s"), std::string::npos) << text;
}

}  // namespace
}  // namespace tumbletrace

namespace tumbletrace {
namespace {

// A tumbling body's results carry the rotation model with its reason and BIC trials, the
// moment ratios and principal axes (the contract's shapes), the angular momentum, the
// flips, the energy and the per-camera figures.
TEST(ResultsJsonTumble, RotationInertiaEnergyAndCameraKeys) {
  const Scenario s = testing::FlipScenario();
  const testing::Recovery r = testing::SimulateAndFit(s, testing::DefaultFitOptions(s));
  const nlohmann::json j = ResultsJson(r.fit, r.summary, Provenance{});
  const nlohmann::json& rotation = j.at("rotation");
  EXPECT_EQ(rotation.at("model"), "free");
  EXPECT_EQ(rotation.at("criterion"), "BIC");
  EXPECT_NE(rotation.at("reason").get<std::string>().find("Bayesian information criterion"),
            std::string::npos);
  ASSERT_GE(rotation.at("models_tried").size(), 2u);
  for (const auto& trial : rotation["models_tried"]) EXPECT_TRUE(trial.at("bic").is_number());
  ASSERT_EQ(rotation.at("angular_momentum_world_unit").size(), 3u);
  ASSERT_TRUE(rotation.at("flip_times_s").is_array());
  EXPECT_GE(rotation["flip_times_s"].size(), 1u);

  const nlohmann::json& inertia = j.at("inertia");
  ASSERT_EQ(inertia.at("ratios").size(), 2u);
  const double r1 = inertia["ratios"][0], r2 = inertia["ratios"][1];
  EXPECT_GT(r1, 0.0);
  EXPECT_LE(r1, r2);  // I1 <= I2 <= I3
  EXPECT_LE(r2, 1.0);
  ASSERT_EQ(inertia.at("sigma_ratios").size(), 2u);
  ASSERT_EQ(inertia.at("axes_body").size(), 3u);
  Eigen::Matrix3d axes;
  for (int row = 0; row < 3; ++row) {
    for (int k = 0; k < 3; ++k) axes(row, k) = inertia["axes_body"][row][k].get<double>();
  }
  EXPECT_TRUE((axes.transpose() * axes).isIdentity(1e-9));  // orthonormal columns
  EXPECT_FALSE(inertia.at("held_from_parts").get<bool>());

  const nlohmann::json& energy = j.at("energy");
  EXPECT_GT(energy.at("translational_per_mass_jpkg").get<double>(), 0.0);
  EXPECT_TRUE(energy.at("rotational_per_mass_jpkg").is_number());  // the paddle has parts
  ASSERT_EQ(j.at("cameras").size(), 1u);
  EXPECT_NEAR(j["cameras"][0].at("rms_px").get<double>(), 0.2, 0.03);
  EXPECT_EQ(j.at("fit").at("model"), "ballistic + free");
}

// The light ball through air: the drag keys with numbers (k, C_d from the mass and area,
// the Reynolds number from the diameter), the models tried, and the diagnostics' keys.
TEST(ResultsJsonAir, DragWindowAndDiagnosticsKeys) {
  const Scenario s = testing::FoamBallScenario(0.2, 5);
  FitOptions options = testing::DefaultFitOptions(s);
  options.rotation = RotationChoice::kConstantSpin;
  testing::Recovery r = testing::SimulateAndFit(s, options);
  AirSpec air;
  air.temperature_c = 20;
  air.pressure_pa = 101325;
  air.relative_humidity = 0.5;
  r.summary = Summarise(r.fit, s.body, air);
  DiagnoseOptions diagnose;
  diagnose.expected_gravity_mps2 = s.gravity_world_mps2;
  const Diagnostics diagnostics = Diagnose(r.fit, FreeFlightWindow{}, s.body, {s.camera}, diagnose);
  const nlohmann::json j = ResultsJson(r.fit, r.summary, Provenance{}, diagnostics);
  const nlohmann::json& drag = j.at("drag");
  EXPECT_NE(drag.at("model"), "none");
  EXPECT_EQ(drag.at("criterion"), "BIC");
  ASSERT_EQ(drag.at("models_tried").size(), 3u);
  EXPECT_TRUE(drag.at("k_per_m").is_number());
  EXPECT_GT(drag.at("sigma_k_per_m").get<double>(), 0.0);
  EXPECT_TRUE(drag.at("cd").is_number());
  EXPECT_TRUE(drag.at("sigma_cd").is_number());
  EXPECT_TRUE(drag.at("reynolds_at_launch").is_number());
  EXPECT_NEAR(drag.at("air_density_kgpm3").get<double>(), AirDensityCipm2007(20, 101325, 0.5), 1e-12);
  EXPECT_NE(drag.at("air").get<std::string>().find("CIPM-2007"), std::string::npos);
  EXPECT_NE(j.at("fit").at("model").get<std::string>().find("drag"), std::string::npos);

  const nlohmann::json& window = j.at("window");
  EXPECT_FALSE(window.at("detected").get<bool>());
  ASSERT_TRUE(window.at("start").is_object());
  const nlohmann::json& d = j.at("diagnostics");
  ASSERT_TRUE(d.at("flags").is_array());
  bool air_flag = false;
  for (const auto& flag : d["flags"]) {
    EXPECT_TRUE(flag.at("sentence").is_string());
    air_flag |= flag.at("kind") == "air";
  }
  EXPECT_TRUE(air_flag);
  EXPECT_EQ(d.at("per_marker").size(), s.body.markers.size());
  EXPECT_TRUE(d.at("runs_test").at("z").is_number());
  EXPECT_TRUE(j.at("gravity").at("check").is_null());  // gravity held: no check

  // frames.csv carries the measured CM and the acceleration residual.
  testing::TempDir dir("results_air");
  WriteFramesCsv(r.fit, r.summary, dir.path() / "frames.csv", diagnostics);
  std::ifstream in(dir.path() / "frames.csv");
  std::string header;
  std::getline(in, header);
  EXPECT_NE(header.find("accel_residual_x_mps2"), std::string::npos);
  EXPECT_NE(header.find("cm_measured_z_m"), std::string::npos);
}

}  // namespace
}  // namespace tumbletrace
