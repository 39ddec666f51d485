// Synthetic frames by ray casting (include/tumbletrace/sim/raycast.hpp).
//
// As in the flat renderer, each pixel's difference from the background is accumulated with
// weight 1 / (s^2 N) over its s x s samples and the N instants, so that
//   frame = background + mean over samples and instants of (sample's level - background),
// then sensor noise, rounding and saturation (frame_levels.hpp).
#include "tumbletrace/sim/raycast.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>

#include "frame_levels.hpp"
#include "pixel_box.hpp"
#include "tumbletrace/sim/lens_rays.hpp"

namespace tumbletrace {
namespace {

constexpr int kTilePx = 8;

// The pixels whose area meets [lo, hi] along one axis (pixel i spans [i - 0.5, i + 0.5)),
// clipped to [0, size). Clamped in double first so that far coordinates cannot overflow.
void PixelRange(double lo, double hi, int size, int* begin, int* end) {
  *begin = static_cast<int>(std::floor(std::clamp(lo + 0.5, 0.0, static_cast<double>(size))));
  *end = static_cast<int>(std::floor(std::clamp(hi + 0.5, -1.0, static_cast<double>(size - 1)))) + 1;
}

// The pixels that can show a solid whose image lies in `bounds`: the lens maps the box's
// boundary (sampled, 9 points a side) onto a closed curve around the image of its inside,
// taken with a margin of one pixel for the curvature between samples.
PixelBox PixelBounds(const NormalisedBox& bounds, const CameraIntrinsics& k) {
  if (bounds.unbounded) return {0, 0, k.width_px, k.height_px};
  double x_lo = std::numeric_limits<double>::infinity(), y_lo = x_lo;
  double x_hi = -x_lo, y_hi = -x_lo;
  constexpr int kPerSide = 8;
  for (int side = 0; side < 4; ++side) {
    for (int i = 0; i <= kPerSide; ++i) {
      const double f = static_cast<double>(i) / kPerSide;
      const double x = side < 2 ? bounds.x_min + f * (bounds.x_max - bounds.x_min)
                                : (side == 2 ? bounds.x_min : bounds.x_max);
      const double y = side < 2 ? (side == 0 ? bounds.y_min : bounds.y_max)
                                : bounds.y_min + f * (bounds.y_max - bounds.y_min);
      const double p[3] = {x, y, 1.0};
      double px[2];
      ProjectCameraPoint(k, p, px);
      x_lo = std::min(x_lo, px[0]);
      x_hi = std::max(x_hi, px[0]);
      y_lo = std::min(y_lo, px[1]);
      y_hi = std::max(y_hi, px[1]);
    }
  }
  constexpr double kMarginPx = 1.0;
  if (!(std::isfinite(x_lo) && std::isfinite(x_hi) && std::isfinite(y_lo) && std::isfinite(y_hi))) {
    return {0, 0, k.width_px, k.height_px};
  }
  PixelBox box;
  PixelRange(x_lo - kMarginPx, x_hi + kMarginPx, k.width_px, &box.x0, &box.x1);
  PixelRange(y_lo - kMarginPx, y_hi + kMarginPx, k.height_px, &box.y0, &box.y1);
  return box;
}

// The pixel box of an overlay dot's ellipse: half widths sqrt(S_00), sqrt(S_11).
PixelBox DotPixelBounds(const RenderedDot& dot, int width, int height) {
  PixelBox box;
  const double hx = std::sqrt(std::max(0.0, dot.shape_px2(0, 0)));
  const double hy = std::sqrt(std::max(0.0, dot.shape_px2(1, 1)));
  PixelRange(dot.center_px.x() - hx, dot.center_px.x() + hx, width, &box.x0, &box.x1);
  PixelRange(dot.center_px.y() - hy, dot.center_px.y() + hy, height, &box.y0, &box.y1);
  return box;
}

bool InsideDot(const RenderedDot& dot, double x, double y) {
  const Eigen::Vector2d d(x - dot.center_px.x(), y - dot.center_px.y());
  const Eigen::Matrix2d& s = dot.shape_px2;
  const double det = s(0, 0) * s(1, 1) - s(0, 1) * s(1, 0);
  if (!(det > 0.0)) return false;
  // d^T S^-1 d <= 1 with S^-1 = adj(S) / det(S).
  return s(1, 1) * d.x() * d.x() - 2.0 * s(0, 1) * d.x() * d.y() + s(0, 0) * d.y() * d.y() <= det;
}

// One instant made ready: the image bounds and bounding radii of its solids, the solids that
// can shadow each one, and the pixel boxes of its markers' images and of its overlay dots.
struct PreparedScene {
  const RayScene* scene = nullptr;
  std::vector<NormalisedBox> bounds;
  std::vector<double> bounding_radius_m;
  std::vector<std::vector<int>> blockers;  // per solid: those its shadow rays must test
  std::vector<PixelBox> marker_boxes;
  std::vector<PixelBox> dot_boxes;
};

// The solids whose bounding spheres meet the half-cylinder swept by solid i's bounding sphere
// towards the light: the only ones that can block its light.
std::vector<std::vector<int>> ShadowBlockers(const RayScene& scene, const std::vector<double>& radii) {
  const Eigen::Vector3d& l = scene.towards_light_camera;
  const int n = static_cast<int>(scene.solids.size());
  std::vector<std::vector<int>> blockers(n);
  for (int i = 0; i < n; ++i) {
    for (int j = 0; j < n; ++j) {
      if (j == i) continue;
      const Eigen::Vector3d d =
          scene.solids[j].primitive.center_camera_m - scene.solids[i].primitive.center_camera_m;
      const double reach = radii[i] + radii[j];
      const double along = d.dot(l);
      if (along >= -reach && (d - along * l).squaredNorm() <= reach * reach) blockers[i].push_back(j);
    }
  }
  return blockers;
}

PreparedScene Prepare(const RayScene& scene, const CameraIntrinsics& k,
                      const RaycastSettings& settings) {
  PreparedScene prepared;
  prepared.scene = &scene;
  for (const SceneSolid& solid : scene.solids) {
    prepared.bounds.push_back(ImageBounds(solid.primitive));
    prepared.bounding_radius_m.push_back(BoundingRadius(solid.primitive));
    if (solid.marker >= 0) prepared.marker_boxes.push_back(PixelBounds(prepared.bounds.back(), k));
  }
  prepared.blockers = ShadowBlockers(scene, prepared.bounding_radius_m);
  for (const RenderedDot& dot : scene.overlay_dots) {
    prepared.dot_boxes.push_back(DotPixelBounds(dot, settings.width_px, settings.height_px));
  }
  return prepared;
}

// NearestSolid among `candidates`, skipping those whose image bounds miss the ray's
// normalised point (x_n, y_n) (null `prepared`: test them all).
int NearestAmong(const RayScene& scene, const PreparedScene* prepared,
                 const std::vector<int>& candidates, const Ray& ray, double x_n, double y_n,
                 bool occlusion, RayHit* hit) {
  RayHit part_hit, marker_hit;
  int part = -1, marker = -1;
  for (const int i : candidates) {
    if (prepared != nullptr && !prepared->bounds[i].Contains(x_n, y_n)) continue;
    const SceneSolid& solid = scene.solids[i];
    const bool is_marker = solid.marker >= 0;
    if (IntersectRay(solid.primitive, ray, 0.0, false, is_marker ? &marker_hit : &part_hit)) {
      (is_marker ? marker : part) = i;
    }
  }
  const bool marker_wins =
      marker >= 0 && (!occlusion || part < 0 || marker_hit.t_m <= part_hit.t_m + kMarkerDepthTieM);
  if (marker_wins) {
    *hit = marker_hit;
    return marker;
  }
  if (part >= 0) *hit = part_hit;
  return part;
}

// Whether the ray from `point` towards the light meets one of `others` (indices into the
// scene's solids; none is the solid the point lies on). A solid whose bounding sphere the
// ray misses (closest approach beyond the radius, or the sphere wholly behind the start) is
// skipped before the exact test.
bool BlockedBy(const RayScene& scene, const std::vector<int>& others, const Eigen::Vector3d& point) {
  const Ray ray{point, scene.towards_light_camera};
  for (const int i : others) {
    const RayPrimitive& other = scene.solids[i].primitive;
    const Eigen::Vector3d to_centre = other.center_camera_m - point;
    const double along = to_centre.dot(ray.direction_camera);
    const double r = BoundingRadius(other);
    if (along < -r || (to_centre - along * ray.direction_camera).squaredNorm() > r * r) continue;
    RayHit hit;
    if (IntersectRay(other, ray, kShadowRayStartM, true, &hit)) return true;
  }
  return false;
}

std::vector<int> AllBut(const RayScene& scene, int solid) {
  std::vector<int> others;
  for (int i = 0; i < static_cast<int>(scene.solids.size()); ++i) {
    if (i != solid) others.push_back(i);
  }
  return others;
}

// The grey level of a ray meeting `solid` at `hit`; `lit` (may be null) says whether its
// light was unblocked. `blockers`: the solids that can shadow it.
double Shade(const RayScene& scene, const std::vector<int>& blockers, int solid, const Ray& ray,
             const RayHit& hit, const RaycastSettings& settings, bool* lit) {
  const SceneSolid& s = scene.solids[solid];
  ShadingGeometry at;
  at.normal = hit.normal_camera;
  at.towards_light = scene.towards_light_camera;
  at.towards_camera = -ray.direction_camera;
  if (settings.shadows && NeedsShadowRay(s.surface, at.normal, at.towards_light)) {
    const Eigen::Vector3d point = ray.origin_camera_m + hit.t_m * ray.direction_camera;
    at.lit = !BlockedBy(scene, blockers, point);
  }
  if (lit != nullptr) *lit = at.lit;
  const double level = s.surface == SurfaceKind::kBody ? settings.body_level : settings.dot_level;
  return level * ShadeFraction(s.surface, settings.lighting, at);
}

[[noreturn]] void Refuse(const std::string& what) {
  throw std::invalid_argument("RaycastFrame: " + what);
}

// Settings and scenes come from the simulator, which builds them from a checked scenario;
// what is refused here is a caller's mistake, not a user's.
void CheckInputs(const std::vector<RayScene>& exposure, const CameraIntrinsics& k,
                 const RaycastSettings& settings) {
  if (settings.width_px <= 0 || settings.height_px <= 0 || settings.width_px != k.width_px ||
      settings.height_px != k.height_px) {
    Refuse("the frame must be the camera's image, positive, got " +
           std::to_string(settings.width_px) + " x " + std::to_string(settings.height_px));
  }
  if (settings.supersampling < 1 || settings.supersampling > 16) {
    Refuse("supersampling must be 1..16, got " + std::to_string(settings.supersampling));
  }
  if (!(settings.noise_sigma_levels >= 0.0) || !std::isfinite(settings.noise_sigma_levels)) {
    Refuse("noise_sigma_levels must be finite and >= 0");
  }
  for (std::size_t k_instant = 0; k_instant < exposure.size(); ++k_instant) {
    const RayScene& scene = exposure[k_instant];
    if (!scene.towards_light_camera.allFinite() ||
        std::abs(scene.towards_light_camera.norm() - 1.0) > 1e-9) {
      Refuse("instant " + std::to_string(k_instant) + ": the light's direction must be a unit vector");
    }
    for (const SceneSolid& solid : scene.solids) {
      const RayPrimitive& p = solid.primitive;
      if (!p.center_camera_m.allFinite() || !p.axes_camera.allFinite() ||
          !p.half_size_m.allFinite() || p.half_size_m.minCoeff() < 0.0) {
        Refuse("instant " + std::to_string(k_instant) + ": a solid with a bad placement or size");
      }
    }
  }
}

// One tile of pixels and, per instant, the solids and overlay dots that may show in it.
struct TileWork {
  PixelBox pixels;
  std::vector<std::vector<int>> solids;  // per instant
  std::vector<std::vector<int>> dots;    // per instant
  bool Empty() const {
    for (std::size_t i = 0; i < solids.size(); ++i) {
      if (!solids[i].empty() || !dots[i].empty()) return false;
    }
    return true;
  }
};

// The normalised bounds of a tile: the extremes of its pixel corners' rays (the lens map is
// monotonic over a tile, so its image lies inside them).
NormalisedBox TileBounds(const LensRays& lens, const PixelBox& tile) {
  NormalisedBox box;
  box.x_min = box.y_min = std::numeric_limits<double>::infinity();
  box.x_max = box.y_max = -std::numeric_limits<double>::infinity();
  for (int y = tile.y0; y <= tile.y1; ++y) {
    for (int x = tile.x0; x <= tile.x1; ++x) {
      const Eigen::Vector2d& n = lens.Corner(x - lens.x0_px(), y - lens.y0_px());
      box.x_min = std::min(box.x_min, n.x());
      box.x_max = std::max(box.x_max, n.x());
      box.y_min = std::min(box.y_min, n.y());
      box.y_max = std::max(box.y_max, n.y());
    }
  }
  return box;
}

TileWork GatherTile(const std::vector<PreparedScene>& prepared, const LensRays& lens,
                    const PixelBox& tile) {
  TileWork work;
  work.pixels = tile;
  const NormalisedBox bounds = TileBounds(lens, tile);
  for (const PreparedScene& p : prepared) {
    std::vector<int>& solids = work.solids.emplace_back();
    for (int i = 0; i < static_cast<int>(p.bounds.size()); ++i) {
      if (p.bounds[i].Overlaps(bounds)) solids.push_back(i);
    }
    std::vector<int>& dots = work.dots.emplace_back();
    for (int i = 0; i < static_cast<int>(p.dot_boxes.size()); ++i) {
      if (p.dot_boxes[i].Overlaps(tile)) dots.push_back(i);
    }
  }
  return work;
}

// What the ray through one pixel corner meets at one instant.
struct CornerSample {
  int solid = -1;
  bool lit = true;
  double level = 0.0;
};

// The level of one camera ray at one instant, or the background's when it meets nothing.
double SampleLevel(const PreparedScene& p, const TileWork& work, std::size_t k, const Ray& ray,
                   double x, double y, const Eigen::Vector2d& n, double background,
                   const RaycastSettings& settings, CornerSample* what) {
  const RayScene& scene = *p.scene;
  for (const int d : work.dots[k]) {
    if (InsideDot(scene.overlay_dots[d], x, y)) {
      what->solid = -2;  // a dot: never taken as a plain corner
      return settings.dot_level;
    }
  }
  RayHit hit;
  what->solid = NearestAmong(scene, &p, work.solids[k], ray, n.x(), n.y(), settings.occlusion, &hit);
  if (what->solid < 0) return background;
  return Shade(scene, p.blockers[what->solid], what->solid, ray, hit, settings, &what->lit);
}

Ray CameraRay(const Eigen::Vector2d& n) {
  return Ray{Eigen::Vector3d::Zero(), Eigen::Vector3d(n.x(), n.y(), 1.0).normalized()};
}

// Whether a pixel of instant k may show a marker or an overlay dot (then always supersampled).
bool NearSmallThings(const PreparedScene& p, const TileWork& work, std::size_t k, int px, int py) {
  const PixelBox pixel{px, py, px + 1, py + 1};
  for (const PixelBox& box : p.marker_boxes) {
    if (box.Overlaps(pixel)) return true;
  }
  for (const int d : work.dots[k]) {
    if (p.dot_boxes[d].Overlaps(pixel)) return true;
  }
  return false;
}

// Casts the tile's rays of instant k and adds each pixel's mean level minus the background,
// weighted by `weight`, into `sums` (tile pixels, row-major). Each pixel corner's ray is cast
// first; a pixel whose four corners meet the same part with the same light, and which is
// near no marker or dot, takes the mean of its corners' levels (the trapezoid rule over the
// smooth shading of one part); any other pixel is the mean of its s x s samples.
void CastInstant(const PreparedScene& p, const TileWork& work, std::size_t k, const LensRays& lens,
                 const std::vector<float>& background, const RaycastSettings& settings,
                 double weight, std::vector<double>* sums) {
  const PixelBox& tile = work.pixels;
  const int w = tile.x1 - tile.x0, h = tile.y1 - tile.y0;
  std::vector<CornerSample> corners(static_cast<std::size_t>(w + 1) * (h + 1));
  for (int j = 0; j <= h; ++j) {
    for (int i = 0; i <= w; ++i) {
      const int x = tile.x0 + i;
      const Eigen::Vector2d& n = lens.Corner(x - lens.x0_px(), tile.y0 + j - lens.y0_px());
      CornerSample& c = corners[static_cast<std::size_t>(j) * (w + 1) + i];
      c.level = SampleLevel(p, work, k, CameraRay(n), x - 0.5, tile.y0 + j - 0.5, n,
                            background[std::min(x, settings.width_px - 1)], settings, &c);
    }
  }
  const int s = settings.supersampling;
  const RayScene& scene = *p.scene;
  for (int j = 0; j < h; ++j) {
    const int py = tile.y0 + j;
    for (int i = 0; i < w; ++i) {
      const int px = tile.x0 + i;
      const CornerSample* c00 = &corners[static_cast<std::size_t>(j) * (w + 1) + i];
      const CornerSample* c01 = c00 + (w + 1);
      const CornerSample* four[4] = {c00, c00 + 1, c01, c01 + 1};
      bool plain = !NearSmallThings(p, work, k, px, py);
      for (const CornerSample* c : four) {
        plain = plain && c->solid == c00->solid && c->lit == c00->lit &&
                (c->solid == -1 || scene.solids[c->solid].marker < 0);
      }
      double& sum = (*sums)[static_cast<std::size_t>(j) * w + i];
      if (plain) {
        if (c00->solid >= 0) {
          sum += weight * (0.25 * (c00->level + four[1]->level + four[2]->level + four[3]->level) -
                           background[px]);
        }
        continue;
      }
      double samples = 0.0;
      for (int b = 0; b < s; ++b) {
        const double y = py + (b + 0.5) / s - 0.5;
        for (int a = 0; a < s; ++a) {
          const double x = px + (a + 0.5) / s - 0.5;
          const Eigen::Vector2d n = lens.Normalised(x, y);
          CornerSample what;
          samples += SampleLevel(p, work, k, CameraRay(n), x, y, n, background[px], settings, &what) -
                     background[px];
        }
      }
      sum += weight * samples / (static_cast<double>(s) * s);
    }
  }
}

// Casts the tile at every instant and adds each pixel's mean difference from the background.
void CastTile(const TileWork& work, const std::vector<PreparedScene>& prepared,
              const LensRays& lens, const std::vector<float>& background,
              const RaycastSettings& settings, cv::Mat* levels) {
  const PixelBox& tile = work.pixels;
  const int w = tile.x1 - tile.x0;
  std::vector<double> sums(static_cast<std::size_t>(w) * (tile.y1 - tile.y0), 0.0);
  const double weight = 1.0 / static_cast<double>(prepared.size());
  for (std::size_t k = 0; k < prepared.size(); ++k) {
    if (work.solids[k].empty() && work.dots[k].empty()) continue;
    CastInstant(prepared[k], work, k, lens, background, settings, weight, &sums);
  }
  for (int py = tile.y0; py < tile.y1; ++py) {
    float* row = levels->ptr<float>(py);
    for (int px = tile.x0; px < tile.x1; ++px) {
      row[px] += static_cast<float>(sums[static_cast<std::size_t>(py - tile.y0) * w + px - tile.x0]);
    }
  }
}

}  // namespace

int NearestSolid(const RayScene& scene, const std::vector<int>& candidates, const Ray& ray,
                 bool occlusion, RayHit* hit) {
  return NearestAmong(scene, nullptr, candidates, ray, 0.0, 0.0, occlusion, hit);
}

bool LightBlocked(const RayScene& scene, int solid, const Eigen::Vector3d& point_camera_m) {
  return BlockedBy(scene, AllBut(scene, solid), point_camera_m);
}

double ShadedLevel(const RayScene& scene, int solid, const Ray& ray, const RayHit& hit,
                   const RaycastSettings& settings) {
  return Shade(scene, AllBut(scene, solid), solid, ray, hit, settings, nullptr);
}

cv::Mat RaycastFrame(const std::vector<RayScene>& exposure, const CameraIntrinsics& intrinsics,
                     const RaycastSettings& settings) {
  CheckInputs(exposure, intrinsics, settings);
  const std::vector<float> background =
      BackgroundRamp(settings.width_px, settings.background_level, settings.background_gradient);
  cv::Mat levels(settings.height_px, settings.width_px, CV_32F);
  for (int y = 0; y < settings.height_px; ++y) {
    std::copy(background.begin(), background.end(), levels.ptr<float>(y));
  }

  std::vector<PreparedScene> prepared;
  PixelBox region;
  for (const RayScene& scene : exposure) {
    prepared.push_back(Prepare(scene, intrinsics, settings));
    for (const NormalisedBox& b : prepared.back().bounds) region = region.Union(PixelBounds(b, intrinsics));
    for (const PixelBox& b : prepared.back().dot_boxes) region = region.Union(b);
  }
  if (!region.Empty()) {
    const LensRays lens(intrinsics, region.x0, region.y0, region.x1, region.y1);
    for (int ty = region.y0; ty < region.y1; ty += kTilePx) {
      for (int tx = region.x0; tx < region.x1; tx += kTilePx) {
        const PixelBox tile{tx, ty, std::min(tx + kTilePx, region.x1), std::min(ty + kTilePx, region.y1)};
        const TileWork work = GatherTile(prepared, lens, tile);
        if (!work.Empty()) CastTile(work, prepared, lens, background, settings, &levels);
      }
    }
  }
  return AddNoiseAndQuantise(settings.noise_sigma_levels, settings.noise_seed, &levels);
}

}  // namespace tumbletrace
