#include "tumbletrace/calibrate/collect_views.hpp"

#include <fmt/format.h>

#include <cmath>
#include <unordered_map>

#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {

std::string CollectOptions::Validate() const {
  if (step < 1) return fmt::format("--every: expected a whole number >= 1, got {}", step);
  if (min_change_px && !(*min_change_px >= 0)) {
    return fmt::format("--min-change: expected a distance >= 0 px, got {}", *min_change_px);
  }
  return "";
}

std::optional<double> ViewDistancePx(const TargetView& a, const TargetView& b) {
  std::unordered_map<int, size_t> index;
  for (size_t i = 0; i < b.ids.size(); ++i) index.emplace(b.ids[i], i);
  double sum = 0.0;
  size_t shared = 0;
  for (size_t i = 0; i < a.ids.size(); ++i) {
    const auto it = index.find(a.ids[i]);
    if (it == index.end()) continue;
    sum += (a.pixels[i] - b.pixels[it->second]).squaredNorm();
    ++shared;
  }
  if (2 * shared < a.ids.size() || 2 * shared < b.ids.size() || shared == 0) return std::nullopt;
  return std::sqrt(sum / shared);
}

CollectedViews CollectTargetViews(const std::filesystem::path& source,
                                  const CalibrationTarget& target, const CollectOptions& options,
                                  const std::function<void(int)>& progress) {
  if (const std::string why = options.Validate(); !why.empty()) throw InputError(why);
  std::unique_ptr<FrameSource> clip = OpenClip(source);
  const bool images = clip->info().kind == "images";
  CollectedViews out;
  out.from_clip = !images;
  Frame frame;
  int seen = 0;
  while (clip->Next(&frame)) {
    if (seen++ % options.step != 0) continue;
    const std::string name =
        images ? fmt::format("image {}", frame.index) : fmt::format("frame {}", frame.index);
    if (out.images_read == 0) {
      out.min_change_px = options.min_change_px.value_or(
          0.02 * std::hypot(frame.image.cols, frame.image.rows));
    }
    ++out.images_read;
    if (auto view = DetectTarget(frame.image, target, name)) {
      bool repeat = false;
      for (const TargetView& kept : out.views) {
        const std::optional<double> distance = ViewDistancePx(*view, kept);
        if (distance && *distance < out.min_change_px) {
          repeat = true;
          break;
        }
      }
      if (repeat) {
        out.repeats.push_back(name);
      } else {
        out.views.push_back(std::move(*view));
      }
    } else {
      out.missed.push_back(name);
    }
    if (progress) progress(out.images_read);
  }
  return out;
}

}  // namespace tumbletrace
