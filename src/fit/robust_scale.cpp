#include "tumbletrace/fit/robust_scale.hpp"

#include <algorithm>
#include <cmath>

namespace tumbletrace {
namespace {

// 1.4826 x the median of |a|: the normal-consistent median absolute deviation about zero
// (common practice); 0 for no values.
double Mad(std::vector<double> a) {
  if (a.empty()) return 0.0;
  const auto mid = a.begin() + a.size() / 2;
  std::nth_element(a.begin(), mid, a.end());
  return 1.4826 * *mid;
}

bool Taken(const std::vector<bool>& from, size_t i) { return from.empty() || from[i]; }

}  // namespace

double PooledRobustSigmaPx(const std::vector<Eigen::Vector2d>& residuals_px,
                           const std::vector<bool>& from) {
  std::vector<double> a;
  a.reserve(2 * residuals_px.size());
  for (size_t i = 0; i < residuals_px.size(); ++i) {
    if (!Taken(from, i)) continue;
    a.push_back(std::abs(residuals_px[i].x()));
    a.push_back(std::abs(residuals_px[i].y()));
  }
  return Mad(std::move(a));
}

std::vector<double> RobustSigmaPerGroupPx(const std::vector<Eigen::Vector2d>& residuals_px,
                                          const std::vector<int>& group,
                                          const std::vector<bool>& from,
                                          const RobustScaleOptions& options) {
  const double pooled = PooledRobustSigmaPx(residuals_px, from);
  const int groups = group.empty() ? 0 : *std::max_element(group.begin(), group.end()) + 1;
  std::vector<std::vector<double>> components(groups);
  for (size_t i = 0; i < residuals_px.size(); ++i) {
    if (!Taken(from, i)) continue;
    components[group[i]].push_back(std::abs(residuals_px[i].x()));
    components[group[i]].push_back(std::abs(residuals_px[i].y()));
  }
  std::vector<double> scale_of(groups, pooled);
  for (int g = 0; g < groups; ++g) {
    if (static_cast<int>(components[g].size()) < options.min_components) continue;
    scale_of[g] = std::clamp(Mad(std::move(components[g])), options.floor_fraction * pooled,
                             options.cap_factor * pooled);
  }
  std::vector<double> out(residuals_px.size());
  for (size_t i = 0; i < residuals_px.size(); ++i) out[i] = scale_of[group[i]];
  return out;
}

}  // namespace tumbletrace
