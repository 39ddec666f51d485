#include "tumbletrace/calibrate/coverage.hpp"

#include <algorithm>
#include <cmath>

namespace tumbletrace {

double CoverageMap::TouchedFraction() const {
  if (counts.empty()) return 0.0;
  const auto touched = std::count_if(counts.begin(), counts.end(), [](int c) { return c > 0; });
  return static_cast<double>(touched) / static_cast<double>(counts.size());
}

bool CoverageMap::CornersTouched() const {
  if (counts.empty()) return false;
  const int last = columns - 1, bottom = (rows - 1) * columns;
  return counts[0] > 0 && counts[last] > 0 && counts[bottom] > 0 && counts[bottom + last] > 0;
}

std::vector<std::string> CoverageMap::Lines() const {
  std::vector<std::string> lines;
  for (int r = 0; r < rows; ++r) {
    std::string line;
    for (int c = 0; c < columns; ++c) line += counts[r * columns + c] > 0 ? '#' : '.';
    lines.push_back(line);
  }
  return lines;
}

CoverageMap MapCoverage(const std::vector<Eigen::Vector2d>& pixels, int width_px, int height_px,
                        int columns, int rows) {
  CoverageMap map;
  map.columns = columns;
  map.rows = rows;
  map.counts.assign(static_cast<size_t>(columns) * rows, 0);
  for (const Eigen::Vector2d& p : pixels) {
    // Pixel i spans [i - 0.5, i + 0.5): the image spans [-0.5, size - 0.5).
    const double u = (p.x() + 0.5) / width_px, v = (p.y() + 0.5) / height_px;
    if (!(u >= 0 && u < 1 && v >= 0 && v < 1)) continue;
    ++map.counts[static_cast<int>(v * rows) * columns + static_cast<int>(u * columns)];
  }
  return map;
}

}  // namespace tumbletrace
