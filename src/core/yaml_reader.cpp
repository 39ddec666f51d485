#include "tumbletrace/core/yaml_reader.hpp"

#include <fmt/format.h>

#include <cmath>
#include <fstream>
#include <sstream>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

std::string JoinPath(const std::string& parent, const std::string& key) {
  return parent.empty() ? key : parent + "." + key;
}

int LineOf(const YAML::Node& node) {
  if (!node.IsDefined()) return 0;
  const YAML::Mark mark = node.Mark();
  return mark.is_null() ? 0 : mark.line + 1;
}

// What a node holds, for "got ..." in messages: a scalar quoted, a list or map in flow style.
std::string Describe(const YAML::Node& node) {
  if (!node.IsDefined() || node.IsNull()) return "an empty value";
  std::string text;
  if (node.IsScalar()) {
    text = node.Scalar();
  } else {
    YAML::Emitter emitter;
    emitter.SetSeqFormat(YAML::Flow);
    emitter.SetMapFormat(YAML::Flow);
    emitter << node;
    text = emitter.c_str();
  }
  constexpr size_t kMaxChars = 60;
  if (text.size() > kMaxChars) text = text.substr(0, kMaxChars) + "...";
  return "'" + text + "'";
}

std::optional<double> ToNumber(const YAML::Node& node) {
  if (!node.IsScalar()) return std::nullopt;
  double value = 0.0;
  if (!YAML::convert<double>::decode(node, value) || !std::isfinite(value)) return std::nullopt;
  return value;
}

std::optional<int> ToInteger(const YAML::Node& node) {
  if (!node.IsScalar()) return std::nullopt;
  int value = 0;
  if (!YAML::convert<int>::decode(node, value)) return std::nullopt;
  return value;
}

}  // namespace

YamlMap YamlMap::LoadFile(const std::filesystem::path& path) {
  const std::string label = path.string();
  std::error_code error;
  if (!std::filesystem::exists(path, error)) {
    throw InputError(fmt::format("{}: file not found", label));
  }
  if (std::filesystem::is_directory(path, error)) {
    throw InputError(fmt::format("{}: is a folder, expected a YAML file", label));
  }
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(fmt::format("{}: cannot be opened for reading", label));
  std::ostringstream text;
  text << in.rdbuf();
  return LoadString(text.str(), label);
}

YamlMap YamlMap::LoadString(const std::string& text, const std::string& file_label) {
  YAML::Node root;
  try {
    root = YAML::Load(text);
  } catch (const YAML::Exception& e) {
    throw InputError(fmt::format("{}:{}: not valid YAML: {}", file_label,
                                 e.mark.is_null() ? 0 : e.mark.line + 1, e.msg));
  }
  if (!root.IsMap()) {
    throw InputError(fmt::format("{}:{}: expected a map of keys at the top level, got {}",
                                 file_label, std::max(LineOf(root), 1), Describe(root)));
  }
  return YamlMap(root, file_label, "");
}

YamlMap::YamlMap(YAML::Node node, std::string file_label, std::string key_path)
    : node_(std::move(node)), file_label_(std::move(file_label)), key_path_(std::move(key_path)) {
  if (!node_.IsMap()) Fail("", "a map of keys");
  // YAML leaves duplicate keys to the reader; a strict reader refuses them.
  std::set<std::string> seen;
  for (auto it = node_.begin(); it != node_.end(); ++it) {
    if (!it->first.IsScalar()) {
      throw InputError(fmt::format("{}:{}: in '{}': expected plain keys, got {}", file_label_,
                                   LineOf(it->first), key_path_, Describe(it->first)));
    }
    const std::string key = it->first.Scalar();
    if (!seen.insert(key).second) {
      throw InputError(fmt::format("{}:{}: key '{}' appears more than once", file_label_,
                                   LineOf(it->first), JoinPath(key_path_, key)));
    }
  }
}

bool YamlMap::Has(const std::string& key) const {
  read_keys_.insert(key);
  const YAML::Node value = static_cast<const YAML::Node&>(node_)[key];
  return value.IsDefined() && !value.IsNull();
}

int YamlMap::line() const { return LineOf(node_); }

std::string YamlMap::Where(const std::string& key) const {
  const YAML::Node value = static_cast<const YAML::Node&>(node_)[key];
  int line_number = LineOf(value);
  if (line_number == 0) line_number = line();
  return fmt::format("{}:{}", file_label_, line_number);
}

void YamlMap::Fail(const std::string& key, const std::string& expected) const {
  if (key.empty()) {
    if (key_path_.empty()) {
      throw InputError(fmt::format("{}:{}: expected {}", file_label_, line(), expected));
    }
    throw InputError(
        fmt::format("{}:{}: '{}': expected {}", file_label_, line(), key_path_, expected));
  }
  const YAML::Node value = static_cast<const YAML::Node&>(node_)[key];
  const std::string path = JoinPath(key_path_, key);
  if (!value.IsDefined()) {
    throw InputError(
        fmt::format("{}: key '{}' is missing; expected {}", Where(key), path, expected));
  }
  throw InputError(fmt::format("{}: key '{}': expected {}, got {}", Where(key), path, expected,
                               Describe(value)));
}

YAML::Node YamlMap::Get(const std::string& key, const std::string& expected) {
  read_keys_.insert(key);
  const YAML::Node value = static_cast<const YAML::Node&>(node_)[key];
  if (!value.IsDefined() || value.IsNull()) Fail(key, expected);
  return value;
}

YAML::Node YamlMap::Node(const std::string& key) {
  read_keys_.insert(key);
  return static_cast<const YAML::Node&>(node_)[key];
}

double YamlMap::Number(const std::string& key, const std::string& expected) {
  const std::optional<double> value = ToNumber(Get(key, expected));
  if (!value) Fail(key, expected);
  return *value;
}

int YamlMap::Integer(const std::string& key, const std::string& expected) {
  const std::optional<int> value = ToInteger(Get(key, expected));
  if (!value) Fail(key, expected);
  return *value;
}

bool YamlMap::Boolean(const std::string& key) {
  const std::string expected = "true or false";
  const YAML::Node node = Get(key, expected);
  bool value = false;
  if (!node.IsScalar() || !YAML::convert<bool>::decode(node, value)) Fail(key, expected);
  return value;
}

std::string YamlMap::String(const std::string& key, const std::string& expected) {
  const YAML::Node node = Get(key, expected);
  if (!node.IsScalar()) Fail(key, expected);
  return node.Scalar();
}

std::vector<double> YamlMap::Numbers(const std::string& key, int n, const std::string& expected) {
  const YAML::Node node = Get(key, expected);
  if (!node.IsSequence() || node.size() == 0) Fail(key, expected);
  if (n >= 0 && node.size() != static_cast<size_t>(n)) Fail(key, expected);
  std::vector<double> values;
  for (const YAML::Node& element : node) {
    const std::optional<double> value = ToNumber(element);
    if (!value) Fail(key, expected);
    values.push_back(*value);
  }
  return values;
}

Eigen::Vector3d YamlMap::Vector3(const std::string& key, const std::string& expected) {
  const std::vector<double> values = Numbers(key, 3, expected);
  return Eigen::Vector3d(values[0], values[1], values[2]);
}

Eigen::Matrix3d YamlMap::Matrix3(const std::string& key, const std::string& expected) {
  const YAML::Node node = Get(key, expected);
  if (!node.IsSequence() || node.size() != 3) Fail(key, expected);
  Eigen::Matrix3d matrix;
  for (int row = 0; row < 3; ++row) {
    const YAML::Node row_node = node[row];
    if (!row_node.IsSequence() || row_node.size() != 3) Fail(key, expected);
    for (int col = 0; col < 3; ++col) {
      const std::optional<double> value = ToNumber(row_node[col]);
      if (!value) Fail(key, expected);
      matrix(row, col) = *value;
    }
  }
  return matrix;
}

YamlMap YamlMap::Map(const std::string& key) {
  const YAML::Node node = Get(key, "a map of keys");
  if (!node.IsMap()) Fail(key, "a map of keys");
  return YamlMap(node, file_label_, JoinPath(key_path_, key));
}

std::vector<YamlMap> YamlMap::MapList(const std::string& key) {
  const std::string expected = "a list of maps";
  const YAML::Node node = Get(key, expected);
  if (!node.IsSequence()) Fail(key, expected);
  std::vector<YamlMap> maps;
  for (size_t i = 0; i < node.size(); ++i) {
    const YAML::Node element = node[i];
    const std::string path = fmt::format("{}[{}]", JoinPath(key_path_, key), i);
    if (!element.IsMap()) {
      throw InputError(fmt::format("{}:{}: '{}': expected a map of keys, got {}", file_label_,
                                   LineOf(element), path, Describe(element)));
    }
    maps.emplace_back(element, file_label_, path);
  }
  return maps;
}

std::optional<double> YamlMap::OptionalNumber(const std::string& key, const std::string& expected) {
  if (!Has(key)) return std::nullopt;
  return Number(key, expected);
}

std::optional<int> YamlMap::OptionalInteger(const std::string& key, const std::string& expected) {
  if (!Has(key)) return std::nullopt;
  return Integer(key, expected);
}

std::optional<std::string> YamlMap::OptionalString(const std::string& key,
                                                   const std::string& expected) {
  if (!Has(key)) return std::nullopt;
  return String(key, expected);
}

std::optional<Eigen::Vector3d> YamlMap::OptionalVector3(const std::string& key,
                                                        const std::string& expected) {
  if (!Has(key)) return std::nullopt;
  return Vector3(key, expected);
}

std::optional<bool> YamlMap::OptionalBoolean(const std::string& key) {
  if (!Has(key)) return std::nullopt;
  return Boolean(key);
}

std::vector<std::string> YamlMap::Keys() const {
  std::vector<std::string> keys;
  for (auto it = node_.begin(); it != node_.end(); ++it) keys.push_back(it->first.Scalar());
  return keys;
}

void YamlMap::Finish() const {
  for (auto it = node_.begin(); it != node_.end(); ++it) {
    const std::string key = it->first.Scalar();
    if (read_keys_.count(key) != 0) continue;
    std::string allowed;
    for (const std::string& known : read_keys_) allowed += (allowed.empty() ? "" : ", ") + known;
    if (allowed.empty()) allowed = "none";
    const std::string where =
        key_path_.empty() ? std::string() : fmt::format(" in '{}'", key_path_);
    throw InputError(fmt::format("{}:{}: unknown key '{}'{}; allowed: {}", file_label_,
                                 LineOf(it->first), key, where, allowed));
  }
}

}  // namespace tumbletrace
