#include "tumbletrace/model/body.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <functional>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

std::string InputErrorOf(const std::function<void()>& action) {
  try {
    action();
  } catch (const InputError& error) {
    return error.what();
  }
  return "(no InputError thrown)";
}

// A fresh folder per test, removed afterwards.
class BodyFileTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() /
              ("tumbletrace_body_" + std::string(info->name()) + "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_);
  }
  void TearDown() override { fs::remove_all(folder_); }

  fs::path Write(const std::string& text) const {
    const fs::path path = folder_ / "body.yaml";
    std::ofstream(path) << text;
    return path;
  }
  // The message of reading `text` as body.yaml, with the folder taken off the path.
  std::string ErrorReading(const std::string& text) const {
    const fs::path path = Write(text);
    std::string message = InputErrorOf([&] { ReadBodyYaml(path); });
    const std::string prefix = (folder_ / "").string();
    if (message.rfind(prefix, 0) == 0) message.erase(0, prefix.size());
    return message;
  }

  fs::path folder_;
};

TEST_F(BodyFileTest, ReadsTheContractExampleInMillimetres) {
  const Body body =
      ReadBodyYaml(Write("units: mm\n"
                         "markers:\n"
                         "  - {id: 1, at: [0, 0, 0]}\n"
                         "  - {id: 7, at: [140, -15, 2.5], diameter: 12, normal: [0, 0, 2]}\n"
                         "references:\n"
                         "  grip_end: [0, 0, 0]\n"
                         "  tip: [280, 0, 0]\n"
                         "parts:\n"
                         "  - {shape: cylinder, axis: x, from: [0,0,0], length: 280, diameter: 30, "
                         "density_kgpm3: 700}\n"));
  ASSERT_EQ(body.markers.size(), 2u);
  EXPECT_EQ(body.markers[0].id, 1);
  EXPECT_EQ(body.markers[0].diameter_m, 0.008);  // the default
  EXPECT_FALSE(body.markers[0].normal_body.has_value());
  EXPECT_EQ(body.markers[1].at_body_m, Eigen::Vector3d(0.14, -0.015, 0.0025));
  EXPECT_EQ(body.markers[1].diameter_m, 0.012);
  ASSERT_TRUE(body.markers[1].normal_body.has_value());
  EXPECT_EQ(*body.markers[1].normal_body, Eigen::Vector3d(0, 0, 1));
  EXPECT_EQ(body.references_body_m.at("tip"), Eigen::Vector3d(0.28, 0, 0));
  ASSERT_EQ(body.parts.size(), 1u);
  const Part& part = body.parts[0];
  EXPECT_EQ(part.shape, PartShape::kCylinder);
  EXPECT_EQ(part.axis_body, Eigen::Vector3d::UnitX());
  EXPECT_EQ(part.length_m, 0.28);
  EXPECT_EQ(part.diameter_m, 0.03);
  EXPECT_EQ(part.density_kgpm3, 700.0);
  EXPECT_FALSE(part.mass_kg.has_value());
  ASSERT_NE(body.FindMarker(7), nullptr);
  EXPECT_EQ(body.FindMarker(7)->id, 7);
  EXPECT_EQ(body.FindMarker(3), nullptr);
}

TEST_F(BodyFileTest, ReadsEveryShapeInMetres) {
  const Body body = ReadBodyYaml(
      Write("units: m\n"
            "markers: [{id: 1, at: [0.1, 0, 0], diameter: 0.01}]\n"
            "parts:\n"
            "  - {shape: cylinder, name: shaft, axis: [0, 3, 4], from: [0, 0, 0], length: 0.5,"
            " diameter: 0.02, mass_kg: 0.3}\n"
            "  - {shape: box, center: [0.1, 0, 0], size: [0.2, 0.05, 0.01], density_kgpm3: 2700}\n"
            "  - {shape: sphere, center: [0, 0, 0.2], diameter: 0.04, mass_kg: 0.1}\n"
            "  - {shape: point, at: [0.3, 0.1, 0], mass_kg: 0.02}\n"));
  EXPECT_EQ(body.markers[0].diameter_m, 0.01);
  ASSERT_EQ(body.parts.size(), 4u);
  EXPECT_EQ(body.parts[0].name, "shaft");
  EXPECT_TRUE(body.parts[0].axis_body.isApprox(Eigen::Vector3d(0, 0.6, 0.8), 1e-15));
  EXPECT_EQ(body.parts[1].shape, PartShape::kBox);
  EXPECT_EQ(body.parts[1].size_m, Eigen::Vector3d(0.2, 0.05, 0.01));
  EXPECT_EQ(body.parts[2].shape, PartShape::kSphere);
  EXPECT_EQ(body.parts[2].diameter_m, 0.04);
  EXPECT_EQ(body.parts[3].shape, PartShape::kPointMass);
  EXPECT_EQ(body.parts[3].center_body_m, Eigen::Vector3d(0.3, 0.1, 0));
  EXPECT_EQ(body.parts[3].mass_kg, 0.02);
}

TEST_F(BodyFileTest, WriteThenReadGivesTheSameBody) {
  Body body;
  body.markers.push_back({3, Eigen::Vector3d(0.1 / 3.0, -0.02, 0.005), 0.006, std::nullopt});
  body.markers.push_back(
      {5, Eigen::Vector3d(0.25, 0.01, 0.0), 0.008, Eigen::Vector3d(0.6, 0.0, 0.8)});
  body.references_body_m["grip end"] = Eigen::Vector3d(0.0, 0.0, 0.0);
  body.references_body_m["tip"] = Eigen::Vector3d(0.28, 0.0, 1.0 / 7.0);
  Part cylinder;
  cylinder.shape = PartShape::kCylinder;
  cylinder.name = "shaft, wooden";
  cylinder.axis_body = Eigen::Vector3d(1.0, 1.0, 0.0).normalized();
  cylinder.length_m = 0.28;
  cylinder.diameter_m = 0.03;
  cylinder.density_kgpm3 = 700.0;
  Part box;
  box.shape = PartShape::kBox;
  box.center_body_m = Eigen::Vector3d(0.3, 0.0, 0.0);
  box.size_m = Eigen::Vector3d(0.05, 0.04, 0.03);
  box.mass_kg = 0.35;
  Part sphere;
  sphere.shape = PartShape::kSphere;
  sphere.center_body_m = Eigen::Vector3d(0.0, 0.0, -0.02);
  sphere.diameter_m = 0.05;
  sphere.density_kgpm3 = 1100.0;
  Part point;
  point.center_body_m = Eigen::Vector3d(0.1, 0.2, 0.3);
  point.mass_kg = 0.01;
  body.parts = {cylinder, box, sphere, point};

  const fs::path path = folder_ / "body.yaml";
  WriteBodyYaml(body, path);
  const Body back = ReadBodyYaml(path);
  ASSERT_EQ(back.markers.size(), body.markers.size());
  for (size_t i = 0; i < body.markers.size(); ++i) {
    EXPECT_EQ(back.markers[i].id, body.markers[i].id);
    EXPECT_TRUE(back.markers[i].at_body_m.isApprox(body.markers[i].at_body_m, 1e-15));
    EXPECT_NEAR(back.markers[i].diameter_m, body.markers[i].diameter_m, 1e-18);
    EXPECT_EQ(back.markers[i].normal_body.has_value(), body.markers[i].normal_body.has_value());
  }
  EXPECT_TRUE(back.markers[1].normal_body->isApprox(*body.markers[1].normal_body, 1e-15));
  ASSERT_EQ(back.references_body_m.size(), 2u);
  EXPECT_TRUE(back.references_body_m.at("tip").isApprox(body.references_body_m.at("tip"), 1e-15));
  ASSERT_EQ(back.parts.size(), 4u);
  for (size_t i = 0; i < body.parts.size(); ++i) {
    const Part& a = body.parts[i];
    const Part& b = back.parts[i];
    EXPECT_EQ(b.shape, a.shape);
    EXPECT_EQ(b.name, a.name);
    EXPECT_TRUE(b.axis_body.isApprox(a.axis_body, 1e-15));
    EXPECT_NEAR(b.length_m, a.length_m, 1e-16);
    EXPECT_NEAR(b.diameter_m, a.diameter_m, 1e-16);
    EXPECT_LT((b.center_body_m - a.center_body_m).norm(), 1e-16);
    EXPECT_LT((b.size_m - a.size_m).norm(), 1e-16);
    EXPECT_EQ(b.density_kgpm3, a.density_kgpm3);
    EXPECT_EQ(b.mass_kg, a.mass_kg);
  }
  EXPECT_LT((back.parts[0].from_body_m - body.parts[0].from_body_m).norm(), 1e-16);
}

TEST_F(BodyFileTest, BadUnitsAreRefused) {
  EXPECT_EQ(ErrorReading("units: inch\nmarkers: [{id: 1, at: [0, 0, 0]}]\n"),
            "body.yaml:1: key 'units': expected 'mm' or 'm', got 'inch'");
  EXPECT_EQ(ErrorReading("markers: [{id: 1, at: [0, 0, 0]}]\n"),
            "body.yaml:1: key 'units' is missing; expected 'mm' or 'm'");
}

TEST_F(BodyFileTest, DuplicateMarkerIdIsRefused) {
  EXPECT_EQ(ErrorReading("units: mm\n"
                         "markers:\n"
                         "  - {id: 1, at: [0, 0, 0]}\n"
                         "  - {id: 2, at: [10, 0, 0]}\n"
                         "  - {id: 1, at: [20, 0, 0]}\n"),
            "body.yaml:5: key 'markers[2].id': expected an id not used before (marker 1 is at "
            "line 3), got '1'");
}

TEST_F(BodyFileTest, AtLeastOneMarker) {
  EXPECT_EQ(ErrorReading("units: mm\nmarkers: []\n"),
            "body.yaml:2: key 'markers': expected a list of at least one marker, got '[]'");
}

TEST_F(BodyFileTest, UnknownMarkerKeyIsNamed) {
  EXPECT_EQ(ErrorReading("units: mm\n"
                         "markers:\n"
                         "  - {id: 1, at: [0, 0, 0]}\n"
                         "  - {id: 2, at: [10, 0, 0]}\n"
                         "  - id: 3\n"
                         "    at: [0, 10, 0]\n"
                         "    colour: red\n"),
            "body.yaml:7: unknown key 'colour' in 'markers[2]'; allowed: at, diameter, id, normal");
}

TEST_F(BodyFileTest, ZeroNormalIsRefused) {
  EXPECT_EQ(ErrorReading("units: mm\nmarkers:\n  - {id: 1, at: [0, 0, 0], normal: [0, 0, 0]}\n"),
            "body.yaml:3: key 'markers[0].normal': expected a non-zero vector [x, y, z] (the dot's "
            "outward normal), got '[0, 0, 0]'");
}

TEST_F(BodyFileTest, PartsNeedExactlyOneOfDensityAndMass) {
  const std::string head = "units: mm\nmarkers: [{id: 1, at: [0, 0, 0]}]\nparts:\n";
  EXPECT_EQ(ErrorReading(head + "  - {shape: sphere, center: [0, 0, 0], diameter: 10}\n"),
            "body.yaml:4: 'parts[0]': expected one of density_kgpm3 and mass_kg");
  EXPECT_EQ(ErrorReading(head + "  - {shape: sphere, center: [0, 0, 0], diameter: 10, mass_kg: 1,"
                                " density_kgpm3: 1000}\n"),
            "body.yaml:4: key 'parts[0].mass_kg': expected only one of density_kgpm3 and "
            "mass_kg, got '1'");
  const std::string point =
      ErrorReading(head + "  - {shape: point, at: [0, 0, 0], mass_kg: 1, density_kgpm3: 1000}\n");
  EXPECT_EQ(point,
            "body.yaml:4: unknown key 'density_kgpm3' in 'parts[0]'; allowed: at, mass_kg, name, "
            "shape");
}

TEST_F(BodyFileTest, BadShapesAndSizesAreRefused) {
  const std::string head = "units: mm\nmarkers: [{id: 1, at: [0, 0, 0]}]\nparts:\n";
  EXPECT_EQ(ErrorReading(head + "  - {shape: cone, mass_kg: 1}\n"),
            "body.yaml:4: key 'parts[0].shape': expected one of cylinder, box, sphere, point, "
            "got 'cone'");
  EXPECT_EQ(ErrorReading(head + "  - {shape: box, center: [0, 0, 0], size: [10, 0, 5], "
                                "mass_kg: 1}\n"),
            "body.yaml:4: key 'parts[0].size': expected three positive edge lengths [x, y, z] in "
            "mm, got '[10, 0, 5]'");
  EXPECT_EQ(ErrorReading(head + "  - {shape: cylinder, axis: w, from: [0, 0, 0], length: 10, "
                                "diameter: 5, mass_kg: 1}\n"),
            "body.yaml:4: key 'parts[0].axis': expected x, y, z or a non-zero vector [x, y, z], "
            "got 'w'");
  EXPECT_EQ(ErrorReading(head + "  - {shape: cylinder, axis: z, from: [0, 0, 0], length: -10, "
                                "diameter: 5, mass_kg: 1}\n"),
            "body.yaml:4: key 'parts[0].length': expected a positive length in mm, got '-10'");
}

TEST_F(BodyFileTest, MissingFileNamesThePath) {
  const fs::path path = folder_ / "nowhere.yaml";
  EXPECT_EQ(InputErrorOf([&] { ReadBodyYaml(path); }), path.string() + ": file not found");
}

}  // namespace
}  // namespace tumbletrace

namespace tumbletrace {
namespace {

TEST_F(BodyFileTest, WeighedMassIsReadWrittenAndMustBePositive) {
  const fs::path path = Write("units: mm\nmass_kg: 0.62\nmarkers: [{id: 1, at: [0, 0, 0]}]\n");
  const Body body = ReadBodyYaml(path);
  ASSERT_TRUE(body.mass_kg.has_value());
  EXPECT_DOUBLE_EQ(*body.mass_kg, 0.62);
  WriteBodyYaml(body, folder_ / "again.yaml");
  EXPECT_DOUBLE_EQ(ReadBodyYaml(folder_ / "again.yaml").mass_kg.value_or(0), 0.62);
  EXPECT_FALSE(ReadBodyYaml(Write("units: mm\nmarkers: [{id: 1, at: [0, 0, 0]}]\n")).mass_kg);
  EXPECT_NE(ErrorReading("units: mm\nmass_kg: -1\nmarkers: [{id: 1, at: [0, 0, 0]}]\n")
                .find("key 'mass_kg'"),
            std::string::npos);
}

}  // namespace
}  // namespace tumbletrace
