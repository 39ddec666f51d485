// The last steps every synthetic frame shares (the flat renderer, render.hpp, and the ray
// caster, raycast.hpp): the background as a left-to-right ramp, then Gaussian sensor noise,
// rounding and saturation to 8 bits. Private to the simulator.
#pragma once

#include <cstdint>
#include <opencv2/core.hpp>
#include <vector>

namespace tumbletrace {

// Grey level of each column: a linear ramp from `level` at the left pixel centre to
// `level + gradient` at the right one.
std::vector<float> BackgroundRamp(int width_px, double level, double gradient);

// Adds N(0, sigma^2) noise to `levels` (CV_32F, row-major pixel order, deviates from
// `seed`; sigma 0: none), then rounds half to even and saturates to 0..255 (CV_8U).
cv::Mat AddNoiseAndQuantise(double sigma_levels, std::uint64_t seed, cv::Mat* levels);

}  // namespace tumbletrace
