#include "tumbletrace/model/tracks.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <fstream>
#include <string>
#include <string_view>

#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

// The contract's columns, then the optional `camera` (the index in the session's list).
constexpr std::string_view kHeader = "frame,time_s,track,marker,x_px,y_px,quality";
constexpr std::string_view kCameraHeader = "frame,time_s,track,marker,x_px,y_px,quality,camera";
constexpr std::array<std::string_view, 8> kColumns = {"frame", "time_s", "track",   "marker",
                                                      "x_px",  "y_px",   "quality", "camera"};
constexpr int kCameraColumn = 7;

std::string_view Trim(std::string_view text) {
  const size_t first = text.find_first_not_of(" \t");
  if (first == std::string_view::npos) return {};
  const size_t last = text.find_last_not_of(" \t");
  return text.substr(first, last - first + 1);
}

// One data line, split into fields; errors name the file, line and column.
class Row {
 public:
  // `header`: the file's header, whose columns every line must have.
  Row(const std::string& file_label, int line_number, std::string_view line,
      std::string_view header)
      : file_label_(file_label), line_number_(line_number) {
    size_t start = 0;
    while (true) {
      const size_t comma = line.find(',', start);
      field_starts_.push_back(start);
      fields_.push_back(Trim(line.substr(start, comma - start)));
      if (comma == std::string_view::npos) break;
      start = comma + 1;
    }
    const size_t columns = header == kCameraHeader ? kColumns.size() : kColumns.size() - 1;
    if (fields_.size() != columns) {
      throw InputError(fmt::format("{}:{}: expected {} comma-separated fields ({}), got {}",
                                   file_label_, line_number_, columns, header, fields_.size()));
    }
  }

  bool Empty(int column) const { return fields_[column].empty(); }

  int Integer(int column, int minimum) const {
    const std::string_view text = fields_[column];
    int value = 0;
    const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
    if (text.empty() || error != std::errc() || end != text.data() + text.size() ||
        value < minimum) {
      Fail(column, fmt::format("an integer, {} or more", minimum));
    }
    return value;
  }

  double Number(int column, const std::string& expected = "a finite number") const {
    const std::string_view text = fields_[column];
    double value = 0.0;
    const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
    if (text.empty() || error != std::errc() || end != text.data() + text.size() ||
        !std::isfinite(value)) {
      Fail(column, expected);
    }
    return value;
  }

  [[noreturn]] void Fail(int column, const std::string& expected) const {
    throw InputError(fmt::format("{}:{}:{}: column '{}': expected {}, got '{}'", file_label_,
                                 line_number_, field_starts_[column] + 1, kColumns[column],
                                 expected, fields_[column]));
  }

 private:
  const std::string& file_label_;
  int line_number_;
  std::vector<std::string_view> fields_;
  std::vector<size_t> field_starts_;
};

}  // namespace

// Rows as in tracks.hpp. Messages read `tracks.csv:LINE:COLUMN: column 'name': expected ...`,
// COLUMN being the 1-based character position of the field.
std::vector<TrackPoint> ReadTracksCsv(const std::filesystem::path& path) {
  const std::string label = path.string();
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(fmt::format("{}: file not found or not readable", label));
  std::vector<TrackPoint> points;
  std::string line;
  std::string_view header;
  int line_number = 0;
  while (std::getline(in, line)) {
    ++line_number;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (line_number == 1) {
      if (line.rfind("\xEF\xBB\xBF", 0) == 0) line.erase(0, 3);  // a byte-order mark
      if (line == kHeader) {
        header = kHeader;
      } else if (line == kCameraHeader) {
        header = kCameraHeader;
      } else {
        throw InputError(fmt::format("{}:1: expected the header '{}' (or with ',camera' after "
                                     "it), got '{}'",
                                     label, kHeader, line));
      }
      continue;
    }
    if (Trim(line).empty()) continue;
    const Row row(label, line_number, line, header);
    TrackPoint point;
    point.source_line = line_number;
    point.frame = row.Integer(0, 0);
    point.time_s = row.Number(1);
    point.track = row.Integer(2, 0);
    if (!row.Empty(3)) point.marker = row.Integer(3, 0);
    point.x_px = row.Number(4);
    point.y_px = row.Number(5);
    point.quality = row.Number(6, "a number from 0 to 1");
    if (!(point.quality >= 0.0 && point.quality <= 1.0)) row.Fail(6, "a number from 0 to 1");
    if (header == kCameraHeader) point.camera = row.Integer(kCameraColumn, 0);
    points.push_back(point);
  }
  if (line_number == 0) {
    throw InputError(
        fmt::format("{}:1: expected the header '{}', got an empty file", label, kHeader));
  }
  return points;
}

// Pixels with 6 decimals (1e-6 px, far below any fit's noise) and times with 9 significant
// digits (1 ns at 1 s), so that a written file reads back as the same measurements. The
// camera column only when a point is of another camera than the first.
void WriteTracksCsv(const std::vector<TrackPoint>& points, const std::filesystem::path& path) {
  const bool with_camera = std::any_of(points.begin(), points.end(),
                                       [](const TrackPoint& p) { return p.camera != 0; });
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << (with_camera ? kCameraHeader : kHeader) << '\n';
    for (const TrackPoint& point : points) {
      out << fmt::format("{},{:.9g},{},{},{:.6f},{:.6f},{:.6g}", point.frame, point.time_s,
                         point.track, point.marker ? std::to_string(*point.marker) : "", point.x_px,
                         point.y_px, point.quality);
      if (with_camera) out << ',' << point.camera;
      out << '\n';
    }
  });
}

}  // namespace tumbletrace
