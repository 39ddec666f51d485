// Synthetic frames for the simulator (include/tumbletrace/sim/render.hpp).
//
// Each instant of the exposure is painted as the difference from the background, only inside
// the boxes of its primitives: silhouettes first, then dots, each with the "over" rule
//   image <- image + coverage * (level - image).
// The differences are added, with weight 1 / N, to one float image that starts as the
// background, so that
//   frame = background + (1 / N) * sum over the N instants of (instant - background),
// the average of the instants' images; then sensor noise, rounding and saturation.
#include "tumbletrace/sim/render.hpp"

#include "frame_levels.hpp"
#include "pixel_box.hpp"

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <stdexcept>
#include <string>
#include <vector>

namespace tumbletrace {
namespace {

// The pixels whose centres lie within [lo, hi] along one axis, grown by half a pixel (a pixel
// i spans [i - 0.5, i + 0.5)), clipped to [0, size). Clamping in double first keeps far-away
// coordinates from overflowing the conversion to int.
void PixelRange(double lo, double hi, int size, int* begin, int* end) {
  const double first = std::floor(std::clamp(lo + 0.5, -1.0, static_cast<double>(size)));
  const double last = std::floor(std::clamp(hi + 0.5, -1.0, static_cast<double>(size)));
  *begin = std::max(0, static_cast<int>(first));
  *end = std::min(size, static_cast<int>(last) + 1);
}

// The fraction of each pixel of `box` a primitive covers, with the covered pixels of each row
// ([row_begin, row_end), frame columns) so that painting skips the empty parts of the box.
struct CoveragePatch {
  PixelBox box;
  std::vector<float> coverage;  // row-major over box, 0..1
  std::vector<int> row_begin;
  std::vector<int> row_end;
  float level = 0.0f;  // grey level the primitive is painted at

  void Reset(const PixelBox& new_box) {
    box = new_box;
    coverage.assign(static_cast<std::size_t>(box.width()) * box.height(), 0.0f);
    row_begin.assign(box.height(), box.x1);
    row_end.assign(box.height(), box.x0);
  }
  float* Row(int y) { return coverage.data() + static_cast<std::size_t>(y - box.y0) * box.width(); }
  const float* Row(int y) const {
    return coverage.data() + static_cast<std::size_t>(y - box.y0) * box.width();
  }
  void MarkCovered(int y, int x_begin, int x_end) {
    row_begin[y - box.y0] = std::min(row_begin[y - box.y0], x_begin);
    row_end[y - box.y0] = std::max(row_end[y - box.y0], x_end);
  }
};

// A polygon edge that is not horizontal, for scanning rows of sub-samples.
struct ScanEdge {
  double y_low;     // lower y of the two ends
  double y_high;    // upper y
  double x_at_low;  // x at y_low
  double dx_per_dy;
};

// Coverage of a simple polygon, point-sampled on the regular grid of s x s sub-samples per
// pixel at offsets (i + 0.5) / s - 0.5 from the pixel centre. Rows of sub-samples are scanned
// with an active edge list: an edge crosses the row at y when y_low <= y < y_high (each vertex
// counted once), the crossings are sorted and the samples x with x_2k <= x < x_2k+1 (even-odd
// rule) are counted per pixel in runs. Cost: edges + sub-rows * (active edges + covered
// pixels), independent of s in the horizontal direction. Returns false when nothing is covered.
bool PolygonCoverage(const std::vector<Eigen::Vector2d>& polygon, int s, cv::Size frame,
                     CoveragePatch* patch) {
  if (polygon.size() < 3) return false;
  double x_min = std::numeric_limits<double>::infinity();
  double x_max = -x_min;
  double y_min = x_min;
  double y_max = -x_min;
  for (const Eigen::Vector2d& p : polygon) {
    x_min = std::min(x_min, p.x());
    x_max = std::max(x_max, p.x());
    y_min = std::min(y_min, p.y());
    y_max = std::max(y_max, p.y());
  }
  PixelBox box;
  PixelRange(x_min, x_max, frame.width, &box.x0, &box.x1);
  PixelRange(y_min, y_max, frame.height, &box.y0, &box.y1);
  if (box.Empty()) return false;

  std::vector<ScanEdge> edges;
  edges.reserve(polygon.size());
  for (std::size_t i = 0; i < polygon.size(); ++i) {
    const Eigen::Vector2d& a = polygon[i];
    const Eigen::Vector2d& b = polygon[(i + 1) % polygon.size()];
    if (a.y() == b.y()) continue;  // never crossed under the half-open rule
    const Eigen::Vector2d& low = a.y() < b.y() ? a : b;
    const Eigen::Vector2d& high = a.y() < b.y() ? b : a;
    edges.push_back({low.y(), high.y(), low.x(), (high.x() - low.x()) / (high.y() - low.y())});
  }
  std::sort(edges.begin(), edges.end(),
            [](const ScanEdge& e, const ScanEdge& f) { return e.y_low < f.y_low; });

  patch->Reset(box);
  const double inv_s = 1.0 / s;
  const float inv_samples = static_cast<float>(inv_s * inv_s);
  const std::int64_t k_lo = static_cast<std::int64_t>(box.x0) * s;  // first sample column
  const std::int64_t k_hi = static_cast<std::int64_t>(box.x1) * s;  // one past the last
  // Whole pixels of a run go into a difference array, summed once per pixel row.
  std::vector<float> run_steps(box.width() + 1, 0.0f);
  std::vector<const ScanEdge*> active;
  std::vector<double> crossings;
  std::size_t next_edge = 0;
  bool any = false;
  for (int py = box.y0; py < box.y1; ++py) {
    float* counts = patch->Row(py);
    for (int j = 0; j < s; ++j) {
      const double y = py + (j + 0.5) * inv_s - 0.5;
      while (next_edge < edges.size() && edges[next_edge].y_low <= y) {
        active.push_back(&edges[next_edge++]);
      }
      active.erase(std::remove_if(active.begin(), active.end(),
                                  [y](const ScanEdge* e) { return e->y_high <= y; }),
                   active.end());
      crossings.clear();
      for (const ScanEdge* e : active) {
        crossings.push_back(e->x_at_low + (y - e->y_low) * e->dx_per_dy);
      }
      std::sort(crossings.begin(), crossings.end());
      for (std::size_t c = 0; c + 1 < crossings.size(); c += 2) {
        // Sample column k sits at x_k = (k + 0.5) / s - 0.5; x_a <= x_k < x_b.
        const double k_first = std::ceil((crossings[c] + 0.5) * s - 0.5);
        const double k_past = std::ceil((crossings[c + 1] + 0.5) * s - 0.5);
        const std::int64_t k0 = static_cast<std::int64_t>(
            std::clamp(k_first, static_cast<double>(k_lo), static_cast<double>(k_hi)));
        const std::int64_t k1 = static_cast<std::int64_t>(
            std::clamp(k_past, static_cast<double>(k_lo), static_cast<double>(k_hi)));
        if (k1 <= k0) continue;
        const int p0 = static_cast<int>(k0 / s);
        const int p1 = static_cast<int>((k1 - 1) / s);
        if (p0 == p1) {
          counts[p0 - box.x0] += static_cast<float>(k1 - k0);
        } else {
          counts[p0 - box.x0] += static_cast<float>(static_cast<std::int64_t>(p0 + 1) * s - k0);
          counts[p1 - box.x0] += static_cast<float>(k1 - static_cast<std::int64_t>(p1) * s);
          run_steps[p0 + 1 - box.x0] += static_cast<float>(s);
          run_steps[p1 - box.x0] -= static_cast<float>(s);
        }
        patch->MarkCovered(py, p0, p1 + 1);
        any = true;
      }
    }
    float run = 0.0f;
    for (int x = patch->row_begin[py - box.y0]; x < patch->row_end[py - box.y0]; ++x) {
      run += run_steps[x - box.x0];
      run_steps[x - box.x0] = 0.0f;
      counts[x - box.x0] = (counts[x - box.x0] + run) * inv_samples;
    }
  }
  return any;
}

double Cross(const Eigen::Vector2d& a, const Eigen::Vector2d& b) {
  return a.x() * b.y() - a.y() * b.x();
}

// Signed area of the unit disc's sector between the rays through a and b.
double SectorArea(const Eigen::Vector2d& a, const Eigen::Vector2d& b) {
  return 0.5 * std::atan2(Cross(a, b), a.dot(b));
}

// Signed area of the intersection of the unit disc with the triangle (0, a, b): the segment
// ab is split where it enters and leaves the disc; the parts outside contribute circular
// sectors, the chord inside a triangle. Summed over the edges of a convex polygon, this is
// the area of the polygon inside the disc.
double DiscTriangleArea(const Eigen::Vector2d& a, const Eigen::Vector2d& b) {
  const bool a_inside = a.squaredNorm() <= 1.0;
  const bool b_inside = b.squaredNorm() <= 1.0;
  if (a_inside && b_inside) return 0.5 * Cross(a, b);
  const Eigen::Vector2d d = b - a;
  const double qa = d.squaredNorm();
  if (qa == 0.0) return 0.0;
  const double qb = a.dot(d);
  const double qc = a.squaredNorm() - 1.0;
  const double discriminant = qb * qb - qa * qc;
  if (discriminant <= 0.0) return SectorArea(a, b);
  const double root = std::sqrt(discriminant);
  const double t_in = (-qb - root) / qa;
  const double t_out = (-qb + root) / qa;
  if (t_out <= 0.0 || t_in >= 1.0) return SectorArea(a, b);
  const Eigen::Vector2d p = a_inside ? a : Eigen::Vector2d(a + std::max(t_in, 0.0) * d);
  const Eigen::Vector2d q = b_inside ? b : Eigen::Vector2d(a + std::min(t_out, 1.0) * d);
  double area = 0.5 * Cross(p, q);
  if (!a_inside) area += SectorArea(a, p);
  if (!b_inside) area += SectorArea(q, b);
  return area;
}

// Work space of DotCoverage, kept across dots.
struct EdgeGrid {
  std::vector<Eigen::Vector2d> corners;  // (w + 1) x (h + 1) pixel corners, mapped
  std::vector<double> along_x;           // DiscTriangleArea of corner (i, j) -> (i + 1, j)
  std::vector<double> along_y;           // DiscTriangleArea of corner (i, j) -> (i, j + 1)
};

// Coverage of the ellipse (p - c)^T S^-1 (p - c) <= 1, exact per pixel. With S = L L^T
// (Cholesky), q = L^-1 (p - c) maps the ellipse onto the unit disc and each pixel square onto
// a parallelogram, so coverage = det(L) * area(unit disc inside the parallelogram), the sum
// of DiscTriangleArea over the four edges. Neighbouring pixels share edges (run in opposite
// directions), so each edge of the box's grid is evaluated once.
//
// Exact area rather than point samples: the detector relies on the intensity-weighted
// centroid of a dot, and s x s point sampling moves it by up to 0.046 px at s = 4 for a disc
// of radius 2 px (0.036 px at 4 px), against 0.011 px (0.004 px) for the exact pixel
// integral, whose only error is the pixel grid's own. Returns false when nothing is covered.
bool DotCoverage(const Eigen::Vector2d& center, const Eigen::Matrix2d& shape, cv::Size frame,
                 EdgeGrid* grid, CoveragePatch* patch) {
  if (!(shape(0, 0) > 0.0)) return false;  // zero area
  const double l00 = std::sqrt(shape(0, 0));
  const double l10 = shape(1, 0) / l00;
  const double l11_squared = shape(1, 1) - l10 * l10;
  if (!(l11_squared > 0.0)) return false;  // zero area: a flat dot seen edge-on
  const double l11 = std::sqrt(l11_squared);
  const double area_scale = l00 * l11;

  const double half_width = l00;
  const double half_height = std::sqrt(shape(1, 1));
  PixelBox box;
  PixelRange(center.x() - half_width, center.x() + half_width, frame.width, &box.x0, &box.x1);
  PixelRange(center.y() - half_height, center.y() + half_height, frame.height, &box.y0, &box.y1);
  if (box.Empty()) return false;

  const int w = box.width();
  const int h = box.height();
  const auto corner = [&](int i, int j) -> const Eigen::Vector2d& {
    return grid->corners[static_cast<std::size_t>(j) * (w + 1) + i];
  };
  grid->corners.resize(static_cast<std::size_t>(w + 1) * (h + 1));
  for (int j = 0; j <= h; ++j) {
    const double dy = box.y0 + j - 0.5 - center.y();
    for (int i = 0; i <= w; ++i) {
      const double dx = box.x0 + i - 0.5 - center.x();
      const double qx = dx / l00;
      grid->corners[static_cast<std::size_t>(j) * (w + 1) + i] =
          Eigen::Vector2d(qx, (dy - l10 * qx) / l11);
    }
  }
  grid->along_x.resize(static_cast<std::size_t>(w) * (h + 1));
  for (int j = 0; j <= h; ++j) {
    for (int i = 0; i < w; ++i) {
      grid->along_x[static_cast<std::size_t>(j) * w + i] =
          DiscTriangleArea(corner(i, j), corner(i + 1, j));
    }
  }
  grid->along_y.resize(static_cast<std::size_t>(w + 1) * h);
  for (int j = 0; j < h; ++j) {
    for (int i = 0; i <= w; ++i) {
      grid->along_y[static_cast<std::size_t>(j) * (w + 1) + i] =
          DiscTriangleArea(corner(i, j), corner(i, j + 1));
    }
  }

  patch->Reset(box);
  bool any = false;
  for (int j = 0; j < h; ++j) {
    float* row = patch->Row(box.y0 + j);
    const double* top = &grid->along_x[static_cast<std::size_t>(j) * w];
    const double* bottom = top + w;
    const double* sides = &grid->along_y[static_cast<std::size_t>(j) * (w + 1)];
    for (int i = 0; i < w; ++i) {
      // Counter-clockwise in (x, y), which L^-1 (positive determinant) keeps: the top edge
      // left to right, the right side down, the bottom right to left, the left side up.
      const double disc_area = top[i] + sides[i + 1] - bottom[i] - sides[i];
      const double coverage = std::clamp(disc_area * area_scale, 0.0, 1.0);
      if (coverage <= 1e-12) continue;
      row[i] = static_cast<float>(coverage);
      patch->MarkCovered(box.y0 + j, box.x0 + i, box.x0 + i + 1);
      any = true;
    }
  }
  return any;
}

[[noreturn]] void Refuse(const std::string& what) {
  throw std::invalid_argument("RenderFrame: " + what);
}

// Settings and primitives come from the simulator, which builds them from a checked scenario;
// what is refused here is a caller's mistake, not a user's.
void CheckInputs(const std::vector<SceneInstant>& exposure, const RenderSettings& settings) {
  if (settings.width_px <= 0 || settings.height_px <= 0) {
    Refuse("width_px and height_px must be positive, got " + std::to_string(settings.width_px) +
           " x " + std::to_string(settings.height_px));
  }
  if (settings.supersampling < 1 || settings.supersampling > 64) {
    Refuse("supersampling must be 1..64, got " + std::to_string(settings.supersampling));
  }
  if (!std::isfinite(settings.background_level) || !std::isfinite(settings.body_level) ||
      !std::isfinite(settings.dot_level) || !std::isfinite(settings.background_gradient)) {
    Refuse("grey levels must be finite");
  }
  if (!(settings.noise_sigma_levels >= 0.0) || !std::isfinite(settings.noise_sigma_levels)) {
    Refuse("noise_sigma_levels must be finite and >= 0");
  }
  for (std::size_t k = 0; k < exposure.size(); ++k) {
    const std::string instant = "instant " + std::to_string(k);
    const SceneInstant& scene = exposure[k];
    for (std::size_t i = 0; i < scene.silhouette_polygons_px.size(); ++i) {
      for (const Eigen::Vector2d& p : scene.silhouette_polygons_px[i]) {
        if (!p.allFinite())
          Refuse(instant + ", polygon " + std::to_string(i) + ": non-finite vertex");
      }
    }
    for (std::size_t i = 0; i < scene.dots.size(); ++i) {
      const RenderedDot& dot = scene.dots[i];
      const std::string where = instant + ", dot " + std::to_string(i) + ": ";
      if (!dot.center_px.allFinite() || !dot.shape_px2.allFinite())
        Refuse(where + "non-finite value");
      const Eigen::Matrix2d& s = dot.shape_px2;
      const double scale = std::abs(s(0, 0)) + std::abs(s(1, 1)) + std::abs(s(0, 1));
      if (std::abs(s(0, 1) - s(1, 0)) > 1e-9 * scale) Refuse(where + "shape_px2 is not symmetric");
      if (s(0, 0) < 0.0 || s(1, 1) < 0.0 ||
          s(0, 0) * s(1, 1) - s(0, 1) * s(1, 0) < -1e-12 * scale * scale) {
        Refuse(where + "shape_px2 is not positive semi-definite");
      }
      if (!(dot.intensity >= 0.0 && dot.intensity <= 1.0)) {
        Refuse(where + "intensity must be in [0, 1], got " + std::to_string(dot.intensity));
      }
    }
  }
}

}  // namespace

cv::Mat RenderFrame(const std::vector<SceneInstant>& exposure, const RenderSettings& settings) {
  CheckInputs(exposure, settings);
  const int width = settings.width_px;
  const int height = settings.height_px;
  const cv::Size frame_size(width, height);

  const std::vector<float> background =
      BackgroundRamp(width, settings.background_level, settings.background_gradient);

  // The frame starts as the background; each instant is painted, as its difference from
  // the background, into `delta` (sized to the union of its primitives' boxes) and added in
  // with weight 1 / N, over the pixels it touched.
  const float weight = exposure.empty() ? 0.0f : 1.0f / static_cast<float>(exposure.size());
  cv::Mat frame_levels(frame_size, CV_32F);
  for (int y = 0; y < height; ++y) {
    std::copy(background.begin(), background.end(), frame_levels.ptr<float>(y));
  }
  cv::Mat delta;
  std::vector<int> touched_begin;
  std::vector<int> touched_end;
  std::vector<CoveragePatch> patches;
  EdgeGrid edge_grid;
  for (const SceneInstant& scene : exposure) {
    std::size_t used = 0;
    auto next_patch = [&]() -> CoveragePatch* {
      if (used == patches.size()) patches.emplace_back();
      return &patches[used];
    };
    for (const std::vector<Eigen::Vector2d>& polygon : scene.silhouette_polygons_px) {
      CoveragePatch* patch = next_patch();
      if (!PolygonCoverage(polygon, settings.supersampling, frame_size, patch)) continue;
      patch->level = static_cast<float>(settings.body_level);
      ++used;
    }
    for (const RenderedDot& dot : scene.dots) {
      CoveragePatch* patch = next_patch();
      const Eigen::Matrix2d shape = 0.5 * (dot.shape_px2 + dot.shape_px2.transpose());
      if (!DotCoverage(dot.center_px, shape, frame_size, &edge_grid, patch)) continue;
      patch->level = static_cast<float>(settings.body_level +
                                        dot.intensity * (settings.dot_level - settings.body_level));
      ++used;
    }
    if (used == 0) continue;

    PixelBox region;
    for (std::size_t i = 0; i < used; ++i) region = region.Union(patches[i].box);
    delta.create(region.height(), region.width(), CV_32F);
    delta.setTo(0.0f);
    touched_begin.assign(region.height(), region.x1);
    touched_end.assign(region.height(), region.x0);
    for (std::size_t i = 0; i < used; ++i) {
      const CoveragePatch& patch = patches[i];
      for (int y = patch.box.y0; y < patch.box.y1; ++y) {
        const float* coverage = patch.Row(y);
        float* out = delta.ptr<float>(y - region.y0);
        const int x_begin = patch.row_begin[y - patch.box.y0];
        const int x_end = patch.row_end[y - patch.box.y0];
        for (int x = x_begin; x < x_end; ++x) {
          float& painted = out[x - region.x0];
          painted += coverage[x - patch.box.x0] * (patch.level - background[x] - painted);
        }
        touched_begin[y - region.y0] = std::min(touched_begin[y - region.y0], x_begin);
        touched_end[y - region.y0] = std::max(touched_end[y - region.y0], x_end);
      }
    }
    for (int y = region.y0; y < region.y1; ++y) {
      const float* painted = delta.ptr<float>(y - region.y0);
      float* out = frame_levels.ptr<float>(y);
      for (int x = touched_begin[y - region.y0]; x < touched_end[y - region.y0]; ++x) {
        out[x] += weight * painted[x - region.x0];
      }
    }
  }

  return AddNoiseAndQuantise(settings.noise_sigma_levels, settings.noise_seed, &frame_levels);
}

}  // namespace tumbletrace
