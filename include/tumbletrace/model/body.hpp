// The thrown body: markers, named reference points and an optional parts list, all in the
// body frame (an arbitrary frame fixed to the object, chosen by the user; lengths in metres
// in memory, in the file's `units` on disk).
#pragma once

#include <Eigen/Core>
#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace tumbletrace {

struct Marker {
  int id = 0;
  Eigen::Vector3d at_body_m = Eigen::Vector3d::Zero();  // centre of the dot
  double diameter_m = 0.008;  // physical diameter of the dot (detection and rendering)
  // Outward normal of a flat dot, unit; absent: visible from every side (a sphere).
  std::optional<Eigen::Vector3d> normal_body;
};

enum class PartShape { kCylinder, kBox, kSphere, kPointMass };

// One part of a parts list. Exactly one of density_kgpm3 and mass_kg is set
// (a point mass has mass only).
struct Part {
  PartShape shape = PartShape::kPointMass;
  std::string name;                                    // optional label
  // cylinder: axis from `from_body_m` along `axis_body` (unit) for `length_m`
  Eigen::Vector3d from_body_m = Eigen::Vector3d::Zero();
  Eigen::Vector3d axis_body = Eigen::Vector3d::UnitX();
  double length_m = 0.0;
  double diameter_m = 0.0;                             // cylinder, sphere
  // box (axis-aligned in the body frame) and sphere: centre; point mass: position
  Eigen::Vector3d center_body_m = Eigen::Vector3d::Zero();
  Eigen::Vector3d size_m = Eigen::Vector3d::Zero();    // box edge lengths along x, y, z
  std::optional<double> density_kgpm3;
  std::optional<double> mass_kg;
};

struct Body {
  std::vector<Marker> markers;
  std::map<std::string, Eigen::Vector3d> references_body_m;
  std::vector<Part> parts;
  // The weighed mass (`mass_kg`), when the user gives it: energies in joules.
  std::optional<double> mass_kg;
  // The aerodynamic reference area and length (`aero_reference: {area: .., length: ..}`,
  // in the file's units squared and units): the drag coefficient C_d = 2 m k / (rho A)
  // and the Reynolds number Re = rho |v| L / mu need them.
  std::optional<double> reference_area_m2;
  std::optional<double> reference_length_m;

  const Marker* FindMarker(int id) const;
};

// body.yaml (docs/files.md): `units: mm|m`, markers, references, parts.
// Throws InputError naming file and key (duplicate marker ids, unknown shapes, both or
// neither of density and mass, non-positive sizes ...).
Body ReadBodyYaml(const std::filesystem::path& path);
void WriteBodyYaml(const Body& body, const std::filesystem::path& path);

}  // namespace tumbletrace
