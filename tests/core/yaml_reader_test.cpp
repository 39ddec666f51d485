#include "tumbletrace/core/yaml_reader.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <functional>
#include <string>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

// The message of the InputError thrown by `action`, or a note that none was thrown.
std::string InputErrorOf(const std::function<void()>& action) {
  try {
    action();
  } catch (const InputError& error) {
    return error.what();
  }
  return "(no InputError thrown)";
}

const char* const kCamera =
    "image_size: [1024, 768]\n"  // line 1
    "fx: 1400.0\n"               // line 2
    "fy: 1400\n"                 // line 3
    "cx: abc\n"                  // line 4
    "distortion: [0, 0, 0, 0, 0]\n"
    "world_to_camera:\n"
    "  rotation: [[1, 0, 0], [0, 1, 0], [0, 0, 1]]\n"
    "  translation_m: [0, 0, 3.5]\n";

TEST(YamlMapTest, ReadsValuesOfEveryKind) {
  YamlMap map = YamlMap::LoadString(kCamera, "camera.yaml");
  EXPECT_EQ(map.Numbers("image_size", 2), (std::vector<double>{1024, 768}));
  EXPECT_DOUBLE_EQ(map.Number("fx"), 1400.0);
  EXPECT_EQ(map.Integer("fy"), 1400);
  EXPECT_EQ(map.String("cx"), "abc");
  EXPECT_EQ(map.Numbers("distortion", -1).size(), 5u);
  YamlMap pose = map.Map("world_to_camera");
  EXPECT_EQ(pose.key_path(), "world_to_camera");
  EXPECT_EQ(pose.Matrix3("rotation"), Eigen::Matrix3d::Identity());
  EXPECT_EQ(pose.Vector3("translation_m"), Eigen::Vector3d(0, 0, 3.5));
  EXPECT_EQ(pose.line(), 7);
  EXPECT_NO_THROW(pose.Finish());
  EXPECT_NO_THROW(map.Finish());
}

TEST(YamlMapTest, WrongTypeNamesFileLineKeyAndValue) {
  YamlMap map = YamlMap::LoadString(kCamera, "camera.yaml");
  EXPECT_EQ(InputErrorOf([&] { map.Number("cx", "a number in pixels"); }),
            "camera.yaml:4: key 'cx': expected a number in pixels, got 'abc'");
  EXPECT_EQ(InputErrorOf([&] { map.Integer("fx"); }),
            "camera.yaml:2: key 'fx': expected an integer, got '1400.0'");
  EXPECT_EQ(InputErrorOf([&] { map.Numbers("image_size", 3, "[w, h, d]"); }),
            "camera.yaml:1: key 'image_size': expected [w, h, d], got '[1024, 768]'");
  EXPECT_EQ(InputErrorOf([&] { map.Map("fx"); }),
            "camera.yaml:2: key 'fx': expected a map of keys, got '1400.0'");
}

TEST(YamlMapTest, NestedKeyPathsAreNamed) {
  YamlMap map = YamlMap::LoadString(kCamera, "camera.yaml");
  YamlMap pose = map.Map("world_to_camera");
  EXPECT_EQ(InputErrorOf([&] { pose.Vector3("rotation"); }),
            "camera.yaml:7: key 'world_to_camera.rotation': expected a list of 3 numbers, got "
            "'[[1, 0, 0], [0, 1, 0], [0, 0, 1]]'");
}

TEST(YamlMapTest, MissingKeyIsNamed) {
  YamlMap map = YamlMap::LoadString(kCamera, "camera.yaml");
  EXPECT_EQ(InputErrorOf([&] { map.Number("cy", "a number in pixels"); }),
            "camera.yaml:1: key 'cy' is missing; expected a number in pixels");
}

TEST(YamlMapTest, OptionalValues) {
  YamlMap map = YamlMap::LoadString("a: 1\nb: ~\nc: [1, 2, 3]\nd: yes\n", "x.yaml");
  EXPECT_EQ(map.OptionalNumber("a"), 1.0);
  EXPECT_EQ(map.OptionalNumber("b"), std::nullopt);  // an empty value counts as absent
  EXPECT_EQ(map.OptionalNumber("z"), std::nullopt);
  EXPECT_EQ(map.OptionalVector3("c"), Eigen::Vector3d(1, 2, 3));
  EXPECT_EQ(map.OptionalBoolean("d"), true);
  EXPECT_EQ(map.OptionalString("e"), std::nullopt);
  EXPECT_NO_THROW(map.Finish());
}

TEST(YamlMapTest, NonFiniteNumbersAreRefused) {
  YamlMap map = YamlMap::LoadString("a: .inf\nb: .nan\n", "x.yaml");
  EXPECT_EQ(InputErrorOf([&] { map.Number("a"); }),
            "x.yaml:1: key 'a': expected a number, got '.inf'");
  EXPECT_EQ(InputErrorOf([&] { map.Number("b"); }),
            "x.yaml:2: key 'b': expected a number, got '.nan'");
}

TEST(YamlMapTest, UnknownKeyNamesTheMapAndTheAllowedKeys) {
  const std::string text =
      "markers:\n"
      "  - {id: 1, at: [0, 0, 0]}\n"
      "  - {id: 2, at: [1, 0, 0]}\n"
      "  - id: 3\n"
      "    at: [0, 1, 0]\n"
      "    diameter: 8\n"
      "    colour: red\n";
  YamlMap map = YamlMap::LoadString(text, "body.yaml");
  std::vector<YamlMap> markers = map.MapList("markers");
  ASSERT_EQ(markers.size(), 3u);
  YamlMap& third = markers[2];
  EXPECT_EQ(third.key_path(), "markers[2]");
  third.Integer("id");
  third.Vector3("at");
  third.OptionalNumber("diameter");
  third.OptionalVector3("normal");
  EXPECT_EQ(InputErrorOf([&] { third.Finish(); }),
            "body.yaml:7: unknown key 'colour' in 'markers[2]'; allowed: at, diameter, id, normal");
}

TEST(YamlMapTest, UnknownTopLevelKey) {
  YamlMap map = YamlMap::LoadString("fx: 1\nfy: 2\n", "camera.yaml");
  map.Number("fx");
  EXPECT_EQ(InputErrorOf([&] { map.Finish(); }), "camera.yaml:2: unknown key 'fy'; allowed: fx");
}

TEST(YamlMapTest, DuplicateKeyIsRefused) {
  EXPECT_EQ(InputErrorOf([] { YamlMap::LoadString("fx: 1\nfx: 2\n", "camera.yaml"); }),
            "camera.yaml:2: key 'fx' appears more than once");
}

TEST(YamlMapTest, ParseErrorGivesTheLine) {
  const std::string message =
      InputErrorOf([] { YamlMap::LoadString("a: 1\nb: [1, 2\nc: 3\n", "broken.yaml"); });
  EXPECT_EQ(message.rfind("broken.yaml:", 0), 0u) << message;
  EXPECT_NE(message.find("not valid YAML"), std::string::npos) << message;
  const std::string bad_indent =
      InputErrorOf([] { YamlMap::LoadString("a: 1\nb:\n  c: 2\n d: 3\n", "indent.yaml"); });
  EXPECT_EQ(bad_indent.rfind("indent.yaml:4: not valid YAML", 0), 0u) << bad_indent;
}

TEST(YamlMapTest, TopLevelMustBeAMap) {
  EXPECT_EQ(InputErrorOf([] { YamlMap::LoadString("", "empty.yaml"); }),
            "empty.yaml:1: expected a map of keys at the top level, got an empty value");
  EXPECT_EQ(InputErrorOf([] { YamlMap::LoadString("- 1\n- 2\n", "list.yaml"); }),
            "list.yaml:1: expected a map of keys at the top level, got '[1, 2]'");
}

TEST(YamlMapTest, ListElementsMustBeMaps) {
  YamlMap map = YamlMap::LoadString("parts:\n  - 3\n", "body.yaml");
  EXPECT_EQ(InputErrorOf([&] { map.MapList("parts"); }),
            "body.yaml:2: 'parts[0]': expected a map of keys, got '3'");
}

TEST(YamlMapTest, FailOnTheMapItself) {
  YamlMap map = YamlMap::LoadString("parts:\n  - {shape: box}\n", "body.yaml");
  YamlMap part = map.MapList("parts")[0];
  EXPECT_EQ(InputErrorOf([&] { part.Fail("", "one of density_kgpm3 and mass_kg"); }),
            "body.yaml:2: 'parts[0]': expected one of density_kgpm3 and mass_kg");
}

TEST(YamlMapTest, KeysInFileOrder) {
  const YamlMap map = YamlMap::LoadString("b: 1\na: 2\nc: 3\n", "x.yaml");
  EXPECT_EQ(map.Keys(), (std::vector<std::string>{"b", "a", "c"}));
}

TEST(YamlMapTest, LoadFileMissingNamesThePath) {
  const std::filesystem::path path =
      std::filesystem::temp_directory_path() / "tumbletrace_yaml_reader_test_missing.yaml";
  std::filesystem::remove(path);
  EXPECT_EQ(InputErrorOf([&] { YamlMap::LoadFile(path); }), path.string() + ": file not found");
}

TEST(YamlMapTest, LoadFileUsesThePathInMessages) {
  const std::filesystem::path path =
      std::filesystem::temp_directory_path() / "tumbletrace_yaml_reader_test_file.yaml";
  std::ofstream(path) << "fx: 1400\nfy: oops\n";
  YamlMap map = YamlMap::LoadFile(path);
  EXPECT_EQ(InputErrorOf([&] { map.Number("fy"); }),
            path.string() + ":2: key 'fy': expected a number, got 'oops'");
  std::filesystem::remove(path);
}

}  // namespace
}  // namespace tumbletrace
