#include "tumbletrace/calibrate/target.hpp"

#include <fmt/format.h>

#include <cmath>
#include <map>

#include "charuco_board.hpp"
#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/core/yaml_reader.hpp"

namespace tumbletrace {
namespace {

// A whole count of at least `minimum` per axis, as [columns, rows].
std::pair<int, int> ReadCounts(YamlMap& map, const std::string& key, int minimum,
                               const std::string& expected) {
  const std::vector<double> values = map.Numbers(key, 2, expected);
  for (double v : values) {
    if (v < minimum || v != std::floor(v) || v > 1000) map.Fail(key, expected);
  }
  return {static_cast<int>(values[0]), static_cast<int>(values[1])};
}

double ReadLength(YamlMap& map, const std::string& key, double scale_m) {
  const std::string expected = "a positive length in the file's units";
  const double value = map.Number(key, expected);
  if (!(value > 0)) map.Fail(key, expected);
  return value * scale_m;
}

std::vector<Eigen::Vector2d> Square(double x0, double y0, double side) {
  return {{x0, y0}, {x0 + side, y0}, {x0 + side, y0 + side}, {x0, y0 + side}};
}

CalibrationTarget ReadTarget(YamlMap map) {
  CalibrationTarget target;
  const std::string kind = map.String("kind", "checkerboard, circle-grid or charuco");
  const std::string units = map.OptionalString("units", "mm or m").value_or("mm");
  if (units != "mm" && units != "m") map.Fail("units", "mm or m");
  const double scale_m = units == "mm" ? 1e-3 : 1.0;
  if (kind == "checkerboard") {
    target.kind = TargetKind::kCheckerboard;
    std::tie(target.columns, target.rows) = ReadCounts(
        map, "inner_corners", 2, "[columns, rows] of inner corners, whole numbers of at least 2");
    target.pitch_m = ReadLength(map, "square", scale_m);
  } else if (kind == "circle-grid") {
    target.kind = TargetKind::kCircleGrid;
    std::tie(target.columns, target.rows) =
        ReadCounts(map, "circles", 2, "[columns, rows] of circles, whole numbers of at least 2");
    target.pitch_m = ReadLength(map, "spacing", scale_m);
    target.circle_diameter_m = ReadLength(map, "diameter", scale_m);
    if (!(target.circle_diameter_m < 0.9 * target.pitch_m)) {
      map.Fail("diameter", "less than 0.9 of the spacing (circles that do not touch)");
    }
  } else if (kind == "charuco") {
    target.kind = TargetKind::kCharuco;
    std::tie(target.columns, target.rows) =
        ReadCounts(map, "squares", 3, "[columns, rows] of squares, whole numbers of at least 3");
    target.pitch_m = ReadLength(map, "square", scale_m);
    target.marker_m = ReadLength(map, "marker", scale_m);
    if (!(target.marker_m < target.pitch_m)) {
      map.Fail("marker", "a marker side smaller than the square side");
    }
    target.dictionary = map.String("dictionary", "one of " + CharucoDictionaryNames());
    if (!CharucoDictionaryKnown(target.dictionary)) {
      map.Fail("dictionary", "one of " + CharucoDictionaryNames());
    }
    const int markers = (target.columns * target.rows) / 2;
    if (markers > CharucoDictionarySize(target.dictionary)) {
      map.Fail("dictionary", fmt::format("a dictionary of at least {} markers for {} x {} squares",
                                         markers, target.columns, target.rows));
    }
  } else {
    map.Fail("kind", "checkerboard, circle-grid or charuco");
  }
  map.Finish();
  return target;
}

}  // namespace

const char* TargetKindName(TargetKind kind) {
  switch (kind) {
    case TargetKind::kCheckerboard: return "checkerboard";
    case TargetKind::kCircleGrid: return "circle-grid";
    case TargetKind::kCharuco: return "charuco";
  }
  return "?";
}

int CalibrationTarget::FeatureColumns() const {
  return kind == TargetKind::kCharuco ? columns - 1 : columns;
}
int CalibrationTarget::FeatureRows() const { return kind == TargetKind::kCharuco ? rows - 1 : rows; }

std::vector<Eigen::Vector3d> CalibrationTarget::FeaturePoints() const {
  std::vector<Eigen::Vector3d> points;
  if (kind == TargetKind::kCharuco) {
    const cv::Ptr<cv::aruco::CharucoBoard> board = MakeCharucoBoard(*this);
    for (const cv::Point3f& p : board->chessboardCorners) {
      points.emplace_back(p.x, p.y, p.z);
    }
    return points;
  }
  for (int row = 0; row < rows; ++row) {
    for (int column = 0; column < columns; ++column) {
      points.emplace_back(column * pitch_m, row * pitch_m, 0.0);
    }
  }
  return points;
}

Eigen::Vector4d CalibrationTarget::SheetBounds() const {
  switch (kind) {
    case TargetKind::kCheckerboard:  // squares from -1 to columns pitches, and a margin
      return {-2 * pitch_m, -2 * pitch_m, (columns + 1) * pitch_m, (rows + 1) * pitch_m};
    case TargetKind::kCircleGrid:
      return {-pitch_m, -pitch_m, columns * pitch_m, rows * pitch_m};
    case TargetKind::kCharuco:
      return {-pitch_m, -pitch_m, (columns + 1) * pitch_m, (rows + 1) * pitch_m};
  }
  return Eigen::Vector4d::Zero();
}

std::vector<std::vector<Eigen::Vector2d>> CalibrationTarget::BlackPolygons() const {
  std::vector<std::vector<Eigen::Vector2d>> polygons;
  if (kind == TargetKind::kCheckerboard) {
    // (columns + 1) x (rows + 1) squares around the inner corners; the square at the
    // first corner's upper left is black.
    for (int iy = -1; iy < rows; ++iy) {
      for (int ix = -1; ix < columns; ++ix) {
        if ((ix + iy) % 2 == 0) polygons.push_back(Square(ix * pitch_m, iy * pitch_m, pitch_m));
      }
    }
  } else if (kind == TargetKind::kCircleGrid) {
    constexpr int kSides = 64;
    const double r = 0.5 * circle_diameter_m;
    for (int row = 0; row < rows; ++row) {
      for (int column = 0; column < columns; ++column) {
        std::vector<Eigen::Vector2d> circle;
        for (int k = 0; k < kSides; ++k) {
          const double a = 2 * M_PI * k / kSides;
          circle.emplace_back(column * pitch_m + r * std::cos(a), row * pitch_m + r * std::sin(a));
        }
        polygons.push_back(std::move(circle));
      }
    }
  } else {
    polygons = CharucoBlackPolygons(*this);
  }
  return polygons;
}

CalibrationTarget ReadTargetYaml(const std::filesystem::path& path) {
  return ReadTarget(YamlMap::LoadFile(path));
}

CalibrationTarget ParseTargetYaml(const std::string& text, const std::string& file_label) {
  return ReadTarget(YamlMap::LoadString(text, file_label));
}

void WriteTargetSvg(const CalibrationTarget& target, const std::filesystem::path& path) {
  const Eigen::Vector4d sheet = target.SheetBounds() * 1e3;  // mm
  const double width = sheet[2] - sheet[0], height = sheet[3] - sheet[1];
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << fmt::format(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0:.6g}mm\" height=\"{1:.6g}mm\" "
        "viewBox=\"0 0 {0:.6g} {1:.6g}\">\n<rect width=\"{0:.6g}\" height=\"{1:.6g}\" "
        "fill=\"white\"/>\n",
        width, height);
    for (const auto& polygon : target.BlackPolygons()) {
      out << "<polygon fill=\"black\" points=\"";
      for (const Eigen::Vector2d& p : polygon) {
        out << fmt::format("{:.4f},{:.4f} ", 1e3 * p.x() - sheet[0], 1e3 * p.y() - sheet[1]);
      }
      out << "\"/>\n";
    }
    out << fmt::format("<!-- tumbletrace {} target: print at 100 % and check the pitch of {} mm "
                       "with a ruler -->\n</svg>\n",
                       TargetKindName(target.kind), 1e3 * target.pitch_m);
  });
}

}  // namespace tumbletrace
