#include "tumbletrace/model/body.hpp"

#include <fmt/format.h>

#include <Eigen/Geometry>

#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/yaml_reader.hpp"

namespace tumbletrace {
namespace {

constexpr double kDefaultMarkerDiameterM = 0.008;
constexpr double kMmPerM = 1000.0;

// Lengths of one file, converted to metres on reading. A division by 1000 is correctly
// rounded, so "8" (mm) reads as the double nearest 0.008.
class Units {
 public:
  explicit Units(YamlMap& map) {
    const std::string name = map.String("units", "'mm' or 'm'");
    if (name == "mm") {
      per_m_ = kMmPerM;
    } else if (name != "m") {
      map.Fail("units", "'mm' or 'm'");
    }
    label_ = name;
  }
  double ToM(double value) const { return value / per_m_; }
  Eigen::Vector3d ToM(const Eigen::Vector3d& value) const { return value / per_m_; }
  const std::string& label() const { return label_; }

 private:
  double per_m_ = 1.0;
  std::string label_;
};

double PositiveLength(YamlMap& map, const std::string& key, const Units& units) {
  const std::string expected = "a positive length in " + units.label();
  const double value = map.Number(key, expected);
  if (!(value > 0)) map.Fail(key, expected);
  return units.ToM(value);
}

Eigen::Vector3d UnitVector(YamlMap& map, const std::string& key, const Eigen::Vector3d& value,
                           const std::string& expected) {
  const double norm = value.norm();
  if (!(norm > 0)) map.Fail(key, expected);
  return value / norm;
}

Marker ReadMarker(YamlMap& map, const Units& units) {
  Marker marker;
  marker.id = map.Integer("id", "an integer marker id");
  marker.at_body_m =
      units.ToM(map.Vector3("at", "[x, y, z] of the marker centre in " + units.label()));
  marker.diameter_m =
      map.Has("diameter") ? PositiveLength(map, "diameter", units) : kDefaultMarkerDiameterM;
  const std::string normal_expected = "a non-zero vector [x, y, z] (the dot's outward normal)";
  if (const auto normal = map.OptionalVector3("normal", normal_expected)) {
    marker.normal_body = UnitVector(map, "normal", *normal, normal_expected);
  }
  map.Finish();
  return marker;
}

// The mass of a part: exactly one of density_kgpm3 and mass_kg, positive.
void ReadMass(YamlMap& map, Part* part, bool density_allowed) {
  if (density_allowed) {
    part->density_kgpm3 = map.OptionalNumber("density_kgpm3", "a positive density in kg/m^3");
    if (part->density_kgpm3 && !(*part->density_kgpm3 > 0)) {
      map.Fail("density_kgpm3", "a positive density in kg/m^3");
    }
  }
  part->mass_kg = map.OptionalNumber("mass_kg", "a positive mass in kg");
  if (part->mass_kg && !(*part->mass_kg > 0)) map.Fail("mass_kg", "a positive mass in kg");
  if (part->density_kgpm3 && part->mass_kg) {
    map.Fail("mass_kg", "only one of density_kgpm3 and mass_kg");
  }
  if (!part->density_kgpm3 && !part->mass_kg) {
    map.Fail("", density_allowed ? "one of density_kgpm3 and mass_kg" : "mass_kg");
  }
}

Part ReadPart(YamlMap& map, const Units& units) {
  Part part;
  const std::string shape_expected = "one of cylinder, box, sphere, point";
  const std::string shape = map.String("shape", shape_expected);
  part.name = map.OptionalString("name", "a name").value_or("");
  const std::string point_expected = "[x, y, z] in " + units.label();
  if (shape == "cylinder") {
    part.shape = PartShape::kCylinder;
    const std::string axis_expected = "x, y, z or a non-zero vector [x, y, z]";
    const YAML::Node axis = map.Node("axis");
    if (axis.IsScalar()) {
      const std::string name = axis.Scalar();
      if (name != "x" && name != "y" && name != "z") map.Fail("axis", axis_expected);
      part.axis_body = Eigen::Vector3d::Unit(name[0] - 'x');
    } else {
      part.axis_body = UnitVector(map, "axis", map.Vector3("axis", axis_expected), axis_expected);
    }
    part.from_body_m = units.ToM(map.Vector3("from", point_expected));
    part.length_m = PositiveLength(map, "length", units);
    part.diameter_m = PositiveLength(map, "diameter", units);
    ReadMass(map, &part, true);
  } else if (shape == "box") {
    part.shape = PartShape::kBox;
    part.center_body_m = units.ToM(map.Vector3("center", point_expected));
    const std::string size_expected = "three positive edge lengths [x, y, z] in " + units.label();
    const Eigen::Vector3d size = map.Vector3("size", size_expected);
    if (!(size.minCoeff() > 0)) map.Fail("size", size_expected);
    part.size_m = units.ToM(size);
    ReadMass(map, &part, true);
  } else if (shape == "sphere") {
    part.shape = PartShape::kSphere;
    part.center_body_m = units.ToM(map.Vector3("center", point_expected));
    part.diameter_m = PositiveLength(map, "diameter", units);
    ReadMass(map, &part, true);
  } else if (shape == "point") {
    part.shape = PartShape::kPointMass;
    part.center_body_m = units.ToM(map.Vector3("at", point_expected));
    ReadMass(map, &part, false);
  } else {
    map.Fail("shape", shape_expected);
  }
  map.Finish();
  return part;
}

std::string Mm(double value_m) { return fmt::format("{}", value_m * kMmPerM); }
std::string Mm(const Eigen::Vector3d& value_m) {
  return fmt::format("[{}, {}, {}]", Mm(value_m.x()), Mm(value_m.y()), Mm(value_m.z()));
}
std::string Plain(const Eigen::Vector3d& value) {
  return fmt::format("[{}, {}, {}]", value.x(), value.y(), value.z());
}

// A string as a YAML scalar: plain when the emitter allows it, or always double-quoted
// (inside a flow map, where a plain ", " would end the value).
std::string Scalar(const std::string& text, bool quoted) {
  YAML::Emitter emitter;
  if (quoted) emitter << YAML::DoubleQuoted;
  emitter << text;
  return emitter.c_str();
}

std::string AxisText(const Eigen::Vector3d& axis) {
  if (axis == Eigen::Vector3d::UnitX()) return "x";
  if (axis == Eigen::Vector3d::UnitY()) return "y";
  if (axis == Eigen::Vector3d::UnitZ()) return "z";
  return Plain(axis);
}

}  // namespace

const Marker* Body::FindMarker(int id) const {
  for (const Marker& marker : markers) {
    if (marker.id == id) return &marker;
  }
  return nullptr;
}

Body ReadBodyYaml(const std::filesystem::path& path) {
  YamlMap map = YamlMap::LoadFile(path);
  const Units units(map);
  Body body;

  std::vector<YamlMap> marker_maps = map.MapList("markers");
  if (marker_maps.empty()) map.Fail("markers", "a list of at least one marker");
  std::map<int, int> line_of_id;
  for (YamlMap& marker_map : marker_maps) {
    Marker marker = ReadMarker(marker_map, units);
    const auto [it, inserted] = line_of_id.emplace(marker.id, marker_map.line());
    if (!inserted) {
      marker_map.Fail("id", fmt::format("an id not used before (marker {} is at line {})",
                                        marker.id, it->second));
    }
    body.markers.push_back(marker);
  }

  if (map.Has("references")) {
    YamlMap references = map.Map("references");
    for (const std::string& name : references.Keys()) {
      body.references_body_m[name] =
          units.ToM(references.Vector3(name, "[x, y, z] in " + units.label()));
    }
    references.Finish();
  }

  if (map.Has("parts")) {
    for (YamlMap& part_map : map.MapList("parts")) body.parts.push_back(ReadPart(part_map, units));
  }
  body.mass_kg = map.OptionalNumber("mass_kg", "the body's weighed mass, kg (positive)");
  if (body.mass_kg && !(*body.mass_kg > 0)) map.Fail("mass_kg", "a positive mass in kg");
  if (map.Has("aero_reference")) {
    YamlMap aero = map.Map("aero_reference");
    const std::string area_expected = "a positive reference area in " + units.label() + "^2";
    const double area = aero.Number("area", area_expected);
    if (!(area > 0)) aero.Fail("area", area_expected);
    body.reference_area_m2 = units.ToM(units.ToM(area));
    const std::string length_expected = "a positive reference length in " + units.label();
    if (const auto length = aero.OptionalNumber("length", length_expected)) {
      if (!(*length > 0)) aero.Fail("length", length_expected);
      body.reference_length_m = units.ToM(*length);
    }
    aero.Finish();
  }
  map.Finish();
  return body;
}

void WriteBodyYaml(const Body& body, const std::filesystem::path& path) {
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << "units: mm\n";
    if (body.mass_kg) out << fmt::format("mass_kg: {}\n", *body.mass_kg);
    if (body.reference_area_m2) {
      out << fmt::format("aero_reference: {{area: {}", *body.reference_area_m2 * 1e6);
      if (body.reference_length_m) out << fmt::format(", length: {}", *body.reference_length_m * 1e3);
      out << "}\n";
    }
    out << "markers:\n";
    for (const Marker& marker : body.markers) {
      out << fmt::format("  - {{id: {}, at: {}, diameter: {}", marker.id, Mm(marker.at_body_m),
                         Mm(marker.diameter_m));
      if (marker.normal_body) out << ", normal: " << Plain(*marker.normal_body);
      out << "}\n";
    }
    if (!body.references_body_m.empty()) {
      out << "references:\n";
      for (const auto& [name, at_body_m] : body.references_body_m) {
        out << "  " << Scalar(name, false) << ": " << Mm(at_body_m) << "\n";
      }
    }
    if (!body.parts.empty()) out << "parts:\n";
    for (const Part& part : body.parts) {
      out << "  - {";
      switch (part.shape) {
        case PartShape::kCylinder:
          out << fmt::format("shape: cylinder, axis: {}, from: {}, length: {}, diameter: {}",
                             AxisText(part.axis_body), Mm(part.from_body_m), Mm(part.length_m),
                             Mm(part.diameter_m));
          break;
        case PartShape::kBox:
          out << fmt::format("shape: box, center: {}, size: {}", Mm(part.center_body_m),
                             Mm(part.size_m));
          break;
        case PartShape::kSphere:
          out << fmt::format("shape: sphere, center: {}, diameter: {}", Mm(part.center_body_m),
                             Mm(part.diameter_m));
          break;
        case PartShape::kPointMass:
          out << fmt::format("shape: point, at: {}", Mm(part.center_body_m));
          break;
      }
      if (!part.name.empty()) out << ", name: " << Scalar(part.name, true);
      if (part.density_kgpm3) out << fmt::format(", density_kgpm3: {}", *part.density_kgpm3);
      if (part.mass_kg) out << fmt::format(", mass_kg: {}", *part.mass_kg);
      out << "}\n";
    }
  });
}

}  // namespace tumbletrace
