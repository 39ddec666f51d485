// The scale the outlier test measures each sighting against: its own marker's robust
// noise, not one scale pooled over all markers.
//
// A marker that is simply noisier than the rest (a smaller or shaded dot, one seen at a
// grazing angle) has residuals several times the pooled scale; measured against the pooled
// scale its honest sightings are set aside by the tens of percent. Each group (a camera x
// marker) gets 1.4826 times the median absolute residual component of its own sightings
// (the normal-consistent MAD, common practice), bounded to [floor_fraction, cap_factor]
// times the pooled scale: the floor keeps a very quiet marker's test from tightening onto
// round-off or quantisation, the cap keeps a marker that is wrong throughout from raising
// its own scale until nothing of it is set aside. A group with fewer than
// `min_components` residual components takes the pooled scale.
#pragma once

#include <Eigen/Core>
#include <vector>

namespace tumbletrace {

struct RobustScaleOptions {
  double floor_fraction = 0.5;
  double cap_factor = 4.0;
  int min_components = 20;
};

// 1.4826 x the median absolute component of the residuals flagged in `from` (all when
// `from` is empty).
double PooledRobustSigmaPx(const std::vector<Eigen::Vector2d>& residuals_px,
                           const std::vector<bool>& from);

// The scale of each sighting: that of its group (`group[i]`, from 0), estimated from the
// sightings flagged in `from` (all when empty).
std::vector<double> RobustSigmaPerGroupPx(const std::vector<Eigen::Vector2d>& residuals_px,
                                          const std::vector<int>& group,
                                          const std::vector<bool>& from,
                                          const RobustScaleOptions& options = {});

}  // namespace tumbletrace
