#include "tumbletrace/identify/sighting_size.hpp"

#include <algorithm>
#include <map>
#include <utility>

namespace tumbletrace {

SightingSizeReport MarkOffSizeSightings(std::vector<TrackPoint>* points, const Body& body,
                                        const SightingSizeOptions& options) {
  SightingSizeReport report;
  // The points of each camera's frame.
  std::map<std::pair<int, int>, std::vector<TrackPoint*>> frames;
  for (TrackPoint& p : *points) {
    if (p.marker && p.radius_px > 0) frames[{p.camera, p.frame}].push_back(&p);
  }
  const auto diameter = [&](int id) {
    const Marker* m = body.FindMarker(id);
    return m ? m->diameter_m : 0.0;
  };
  std::vector<double> scaled;
  for (auto& [key, seen] : frames) {
    for (TrackPoint* p : seen) {
      const double d = diameter(*p->marker);
      if (!(d > 0)) continue;
      scaled.clear();
      for (const TrackPoint* q : seen) {
        const double dq = diameter(*q->marker);
        if (q == p || !q->outline_fitted || !(dq > 0)) continue;
        scaled.push_back(q->radius_px * d / dq);
      }
      if (static_cast<int>(scaled.size()) < options.min_references) continue;
      const auto middle = scaled.begin() + scaled.size() / 2;
      std::nth_element(scaled.begin(), middle, scaled.end());
      double expected = *middle;
      if (scaled.size() % 2 == 0) {
        expected = 0.5 * (expected + *std::max_element(scaled.begin(), middle));
      }
      ++report.judged;
      const bool smaller = p->radius_px < options.min_share * expected;
      const bool larger = p->radius_px > options.max_share * expected;
      if ((smaller || larger) && p->quality > 0) {
        p->quality = 0.0;
        ++report.marked;
      }
    }
  }
  return report;
}

}  // namespace tumbletrace
