// Strict reading of the project's YAML files.
//
// Every value is read through a YamlMap, which remembers which keys were read; Finish()
// then refuses any key that was not, naming it. Every error is an InputError whose text
// names the file, the line, the key path and what was expected, e.g.
//   camera.yaml:4: key 'fx': expected a number in pixels, got 'abc'
#pragma once

#include <yaml-cpp/yaml.h>

#include <Eigen/Core>
#include <filesystem>
#include <optional>
#include <set>
#include <string>
#include <vector>

namespace tumbletrace {

class YamlMap {
 public:
  // Loads `path` and requires its top level to be a map. Throws InputError when the file
  // is missing, unreadable, not YAML (with the parser's line) or not a map.
  static YamlMap LoadFile(const std::filesystem::path& path);
  // Parses `text` as if it came from a file called `file_label` (used in messages).
  static YamlMap LoadString(const std::string& text, const std::string& file_label);

  YamlMap(YAML::Node node, std::string file_label, std::string key_path);

  bool Has(const std::string& key) const;

  // Required values. `expected` completes "expected ..." in messages, e.g. "a number in px".
  double Number(const std::string& key, const std::string& expected = "a number");
  int Integer(const std::string& key, const std::string& expected = "an integer");
  bool Boolean(const std::string& key);
  std::string String(const std::string& key, const std::string& expected = "a string");
  // A sequence of exactly n numbers (n = -1: any length, at least one).
  std::vector<double> Numbers(const std::string& key, int n,
                              const std::string& expected = "a list of numbers");
  Eigen::Vector3d Vector3(const std::string& key,
                          const std::string& expected = "a list of 3 numbers");
  // A 3x3 matrix written as three rows of three numbers.
  Eigen::Matrix3d Matrix3(const std::string& key,
                          const std::string& expected = "three rows of three numbers");
  // A nested map, and a sequence of maps.
  YamlMap Map(const std::string& key);
  std::vector<YamlMap> MapList(const std::string& key);

  // Optional values: std::nullopt when the key is absent.
  std::optional<double> OptionalNumber(const std::string& key,
                                       const std::string& expected = "a number");
  std::optional<int> OptionalInteger(const std::string& key,
                                     const std::string& expected = "an integer");
  std::optional<std::string> OptionalString(const std::string& key,
                                            const std::string& expected = "a string");
  std::optional<Eigen::Vector3d> OptionalVector3(
      const std::string& key, const std::string& expected = "a list of 3 numbers");
  std::optional<bool> OptionalBoolean(const std::string& key);

  // The raw node of a key (marks it read). For values with several accepted forms.
  YAML::Node Node(const std::string& key);
  // The keys present in this map, in file order.
  std::vector<std::string> Keys() const;

  // Throws InputError naming the first key present but never read, and the keys allowed.
  void Finish() const;

  // Throws InputError for `key` (or for the map itself when key is empty) with
  // "expected <expected>" and, when the key is present, what was found.
  [[noreturn]] void Fail(const std::string& key, const std::string& expected) const;

  const std::string& file_label() const { return file_label_; }
  const std::string& key_path() const { return key_path_; }
  // 1-based line of the map itself, or 0 when unknown.
  int line() const;

 private:
  YAML::Node Get(const std::string& key, const std::string& expected);
  std::string Where(const std::string& key) const;

  YAML::Node node_;
  std::string file_label_;
  std::string key_path_;
  mutable std::set<std::string> read_keys_;
};

}  // namespace tumbletrace
