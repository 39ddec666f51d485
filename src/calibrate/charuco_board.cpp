#include "charuco_board.hpp"

#include <fmt/format.h>

#include <map>

namespace tumbletrace {
namespace {

const std::map<std::string, cv::aruco::PREDEFINED_DICTIONARY_NAME>& Dictionaries() {
  using namespace cv::aruco;
  static const std::map<std::string, PREDEFINED_DICTIONARY_NAME> names = {
      {"DICT_4X4_50", DICT_4X4_50},     {"DICT_4X4_100", DICT_4X4_100},
      {"DICT_4X4_250", DICT_4X4_250},   {"DICT_4X4_1000", DICT_4X4_1000},
      {"DICT_5X5_50", DICT_5X5_50},     {"DICT_5X5_100", DICT_5X5_100},
      {"DICT_5X5_250", DICT_5X5_250},   {"DICT_5X5_1000", DICT_5X5_1000},
      {"DICT_6X6_50", DICT_6X6_50},     {"DICT_6X6_100", DICT_6X6_100},
      {"DICT_6X6_250", DICT_6X6_250},   {"DICT_6X6_1000", DICT_6X6_1000},
      {"DICT_7X7_50", DICT_7X7_50},     {"DICT_7X7_100", DICT_7X7_100},
      {"DICT_7X7_250", DICT_7X7_250},   {"DICT_7X7_1000", DICT_7X7_1000}};
  return names;
}

}  // namespace

bool CharucoDictionaryKnown(const std::string& name) { return Dictionaries().count(name) > 0; }

std::string CharucoDictionaryNames() {
  std::string out;
  for (const auto& [name, id] : Dictionaries()) out += (out.empty() ? "" : ", ") + name;
  return out;
}

int CharucoDictionarySize(const std::string& name) {
  return cv::aruco::getPredefinedDictionary(Dictionaries().at(name))->bytesList.rows;
}

cv::Ptr<cv::aruco::CharucoBoard> MakeCharucoBoard(const CalibrationTarget& target) {
  return cv::aruco::CharucoBoard::create(
      target.columns, target.rows, static_cast<float>(target.pitch_m),
      static_cast<float>(target.marker_m),
      cv::aruco::getPredefinedDictionary(Dictionaries().at(target.dictionary)));
}

std::vector<std::vector<Eigen::Vector2d>> CharucoBlackPolygons(const CalibrationTarget& target) {
  const cv::Ptr<cv::aruco::CharucoBoard> board = MakeCharucoBoard(target);
  std::vector<std::vector<Eigen::Vector2d>> polygons;
  const double s = target.pitch_m;
  // A square is black when no marker lies in it (the markers sit in the white squares);
  // this follows the board's own layout whatever its orientation convention.
  for (int iy = 0; iy < target.rows; ++iy) {
    for (int ix = 0; ix < target.columns; ++ix) {
      bool has_marker = false;
      for (const auto& corners : board->objPoints) {
        const double cx = 0.25 * (corners[0].x + corners[1].x + corners[2].x + corners[3].x);
        const double cy = 0.25 * (corners[0].y + corners[1].y + corners[2].y + corners[3].y);
        has_marker |= cx > ix * s && cx < (ix + 1) * s && cy > iy * s && cy < (iy + 1) * s;
      }
      if (!has_marker) {
        polygons.push_back({{ix * s, iy * s}, {(ix + 1) * s, iy * s},
                            {(ix + 1) * s, (iy + 1) * s}, {ix * s, (iy + 1) * s}});
      }
    }
  }
  // Each marker: a one-cell black border around its bits (bit 1 white, as drawMarker
  // draws it); cell (r, c) of the (n + 2) x (n + 2) grid spans from corner 0 along
  // corner 1 - corner 0 (columns) and corner 3 - corner 0 (rows).
  const int n = board->dictionary->markerSize;
  for (size_t m = 0; m < board->ids.size(); ++m) {
    const cv::Mat bits = cv::aruco::Dictionary::getBitsFromByteList(
        board->dictionary->bytesList.rowRange(board->ids[m], board->ids[m] + 1), n);
    const auto& c = board->objPoints[m];
    const Eigen::Vector2d origin(c[0].x, c[0].y);
    const Eigen::Vector2d along((c[1].x - c[0].x) / (n + 2), (c[1].y - c[0].y) / (n + 2));
    const Eigen::Vector2d down((c[3].x - c[0].x) / (n + 2), (c[3].y - c[0].y) / (n + 2));
    for (int r = 0; r < n + 2; ++r) {
      for (int col = 0; col < n + 2; ++col) {
        const bool border = r == 0 || col == 0 || r == n + 1 || col == n + 1;
        if (!border && bits.at<unsigned char>(r - 1, col - 1) != 0) continue;
        const Eigen::Vector2d p = origin + col * along + r * down;
        polygons.push_back({p, p + along, p + along + down, p + down});
      }
    }
  }
  return polygons;
}

}  // namespace tumbletrace
