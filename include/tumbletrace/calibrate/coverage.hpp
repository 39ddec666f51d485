// Which parts of the image the detected target features cover: a grid of cells over the
// image, each touched or not. Distortion is estimated where the views put features;
// elsewhere (often the corners, where it is largest) it is extrapolated.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

namespace tumbletrace {

struct CoverageMap {
  int columns = 0;
  int rows = 0;
  std::vector<int> counts;  // features per cell, row-major

  double TouchedFraction() const;
  bool CornersTouched() const;  // the four corner cells of the image
  // One text line per row of cells: '#' touched, '.' not.
  std::vector<std::string> Lines() const;
};

// `columns` x `rows` cells over a width x height image; pixels outside are ignored.
CoverageMap MapCoverage(const std::vector<Eigen::Vector2d>& pixels, int width_px, int height_px,
                        int columns, int rows);

}  // namespace tumbletrace
