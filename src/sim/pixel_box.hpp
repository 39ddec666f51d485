// A rectangle of whole pixels, shared by the simulator's two renderers.
#pragma once

#include <algorithm>

namespace tumbletrace {

// Pixels [x0, x1) x [y0, y1).
struct PixelBox {
  int x0 = 0;
  int y0 = 0;
  int x1 = 0;
  int y1 = 0;

  bool Empty() const { return x0 >= x1 || y0 >= y1; }
  int width() const { return x1 - x0; }
  int height() const { return y1 - y0; }
  // The smallest box holding both (an empty box adds nothing).
  PixelBox Union(const PixelBox& b) const {
    if (Empty()) return b;
    if (b.Empty()) return *this;
    return {std::min(x0, b.x0), std::min(y0, b.y0), std::max(x1, b.x1), std::max(y1, b.y1)};
  }
  bool Overlaps(const PixelBox& b) const { return x0 < b.x1 && b.x0 < x1 && y0 < b.y1 && b.y0 < y1; }
};

}  // namespace tumbletrace
