// A planar calibration target: what is printed on it and where its features lie.
//
// The target file (docs/files.md, "target.yaml") names one of three kinds OpenCV detects:
//   checkerboard  inner_corners: [columns, rows], square: side
//   circle-grid   circles: [columns, rows], spacing: centre to centre, diameter
//   charuco       squares: [columns, rows], square: side, marker: side, dictionary: name
// with `units: mm|m` for its lengths. The target frame: x along a row of features, y down
// the columns, z = x cross y (into the board when its printed face looks at the camera),
// origin at the first feature for a checkerboard or circle grid, at the outer corner of the
// first square for a ChArUco board (whose first inner corner is then at (pitch, pitch)):
// OpenCV's object-point conventions.
#pragma once

#include <Eigen/Core>
#include <filesystem>
#include <string>
#include <vector>

namespace tumbletrace {

enum class TargetKind { kCheckerboard, kCircleGrid, kCharuco };
// The name the target file uses ("checkerboard", "circle-grid", "charuco").
const char* TargetKindName(TargetKind kind);

struct CalibrationTarget {
  TargetKind kind = TargetKind::kCheckerboard;
  int columns = 0;            // inner corners (checkerboard), circles, or squares (charuco)
  int rows = 0;
  double pitch_m = 0.0;       // square side, or circle spacing
  double circle_diameter_m = 0.0;  // circle-grid
  double marker_m = 0.0;      // charuco: side of the ArUco markers in the white squares
  std::string dictionary;     // charuco: OpenCV's predefined dictionary, e.g. "DICT_5X5_100"

  // The detectable features in the target frame (z = 0), metres; index = feature id
  // (row-major: id = row * feature_columns + column).
  std::vector<Eigen::Vector3d> FeaturePoints() const;
  int FeatureColumns() const;  // charuco: columns - 1 inner corners
  int FeatureRows() const;
  // The printed pattern: the black areas as polygons in the target frame (x, y in metres),
  // for rendering in the simulator and for printing. Curves (circles) as 64-gons.
  std::vector<std::vector<Eigen::Vector2d>> BlackPolygons() const;
  // The printed sheet: the pattern with a white margin of one pitch, metres [x0, y0, x1, y1].
  Eigen::Vector4d SheetBounds() const;
};

// Reads target.yaml strictly (unknown keys are an error naming the key). Throws InputError
// naming the file, the key and what was expected.
CalibrationTarget ReadTargetYaml(const std::filesystem::path& path);
CalibrationTarget ParseTargetYaml(const std::string& text, const std::string& file_label);

// Writes the pattern at its true size as an SVG drawing (millimetres), to print at 100 %.
void WriteTargetSvg(const CalibrationTarget& target, const std::filesystem::path& path);

}  // namespace tumbletrace
