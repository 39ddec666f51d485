#include "tumbletrace/calibrate/collect_views.hpp"

#include <fmt/format.h>

#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {

CollectedViews CollectTargetViews(const std::filesystem::path& source,
                                  const CalibrationTarget& target, int step,
                                  const std::function<void(int)>& progress) {
  if (step < 1) throw InputError(fmt::format("--every: expected a whole number >= 1, got {}", step));
  std::unique_ptr<FrameSource> clip = OpenClip(source);
  const bool images = clip->info().kind == "images";
  CollectedViews out;
  Frame frame;
  int seen = 0;
  while (clip->Next(&frame)) {
    if (seen++ % step != 0) continue;
    const std::string name =
        images ? fmt::format("image {}", frame.index) : fmt::format("frame {}", frame.index);
    if (auto view = DetectTarget(frame.image, target, name)) {
      out.views.push_back(std::move(*view));
    } else {
      out.missed.push_back(name);
    }
    ++out.images_read;
    if (progress) progress(out.images_read);
  }
  return out;
}

}  // namespace tumbletrace
