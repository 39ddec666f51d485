#include "tumbletrace/report/overlay.hpp"

#include <fmt/format.h>

#include <map>
#include <opencv2/imgproc.hpp>

#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/clip/video_writer.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

// Pure BGR channels (see the header).
const cv::Scalar kDetected(0, 255, 0), kPredicted(0, 0, 255), kCmMark(255, 0, 0), kPath(0, 255, 255),
    kLabel(255, 255, 255);

double WorldTime(const OverlayInput& input, int frame) {
  return frame / input.capture_fps + input.parameters->TimeOffsetS(input.camera_index);
}

// Shift for cv:: drawing with sub-pixel positions (coordinates in 1/16 px).
constexpr int kShift = 4;
cv::Point Fixed(const Eigen::Vector2d& p) {
  return {static_cast<int>(std::lround(p.x() * (1 << kShift))), static_cast<int>(std::lround(p.y() * (1 << kShift)))};
}

cv::Mat ToBgr8(const cv::Mat& image) {
  cv::Mat grey8 = image;
  if (image.depth() == CV_16U) image.convertTo(grey8, CV_8U, 1.0 / 256.0);
  cv::Mat bgr;
  if (grey8.channels() == 1) cv::cvtColor(grey8, bgr, cv::COLOR_GRAY2BGR);
  else bgr = grey8.clone();
  return bgr;
}

}  // namespace

bool CmPixel(const OverlayInput& input, int frame, Eigen::Vector2d* pixel) {
  // The CM is the body point cm_body_m: its prediction is the fitted CM's projection.
  return input.parameters->PredictPixel(input.camera, input.parameters->cm_body_m, WorldTime(input, frame), pixel);
}

void WriteOverlayVideo(const OverlayInput& input, const std::filesystem::path& path, const OverlayOptions& options) {
  std::unique_ptr<FrameSource> source = OpenClip(input.clip);
  std::map<int, std::vector<const TrackPoint*>> detections;
  for (const TrackPoint& p : input.detections) detections[p.frame].push_back(&p);
  // The CM's path over the window, drawn on every frame.
  std::vector<cv::Point> path_px;
  for (int f = input.first_frame; f <= input.last_frame; ++f) {
    Eigen::Vector2d p;
    if (CmPixel(input, f, &p)) path_px.push_back(Fixed(p));
  }
  const std::filesystem::path partial = path.parent_path() / (path.stem().string() + ".partial.mp4");
  std::unique_ptr<VideoWriter> writer;
  Frame frame;
  while (source->Next(&frame)) {
    cv::Mat bgr = ToBgr8(frame.image);
    if (!writer) {
      // H.264 needs even sizes: an odd clip gets a black last column or row.
      const cv::Size even(bgr.cols + bgr.cols % 2, bgr.rows + bgr.rows % 2);
      writer = std::make_unique<VideoWriter>(partial, even, options.playback_fps, true);
    }
    const bool inside = frame.index >= input.first_frame && frame.index <= input.last_frame;
    if (!inside) bgr *= 0.4;
    if (path_px.size() > 1) {
      cv::polylines(bgr, path_px, false, kPath, 1, cv::LINE_AA, kShift);
    }
    if (const auto it = detections.find(frame.index); it != detections.end()) {
      for (const TrackPoint* p : it->second) {
        cv::circle(bgr, Fixed({p->x_px, p->y_px}), options.marker_radius_px << kShift, kDetected, 1, cv::LINE_AA, kShift);
      }
    }
    if (inside) {
      const double t = WorldTime(input, frame.index);
      for (const Marker& m : input.markers) {
        Eigen::Vector2d p;
        if (!input.parameters->PredictPixel(input.camera, m.at_body_m, t, &p)) continue;
        const Eigen::Vector2d a(options.cross_half_px, options.cross_half_px), b(options.cross_half_px, -options.cross_half_px);
        cv::line(bgr, Fixed(p - a), Fixed(p + a), kPredicted, 1, cv::LINE_AA, kShift);
        cv::line(bgr, Fixed(p - b), Fixed(p + b), kPredicted, 1, cv::LINE_AA, kShift);
      }
      Eigen::Vector2d cm;
      if (CmPixel(input, frame.index, &cm)) {
        cv::circle(bgr, Fixed(cm), options.cm_radius_px << kShift, kCmMark, cv::FILLED, cv::LINE_AA, kShift);
      }
    }
    const std::string label =
        fmt::format("frame {}  t = {:.1f} ms  {}", frame.index, 1e3 * frame.index / input.capture_fps,
                    inside ? "free flight (fitted)" : "outside the free-flight window");
    const double scale = std::max(0.35, bgr.cols / 1400.0);
    cv::putText(bgr, label, cv::Point(6, static_cast<int>(18 * scale / 0.5)), cv::FONT_HERSHEY_SIMPLEX, scale, kLabel,
                1, cv::LINE_AA);
    if (bgr.cols % 2 || bgr.rows % 2) {
      cv::copyMakeBorder(bgr, bgr, 0, bgr.rows % 2, 0, bgr.cols % 2, cv::BORDER_CONSTANT, cv::Scalar(0, 0, 0));
    }
    writer->Write(bgr);
  }
  if (!writer) throw DataError(fmt::format("{}: no frame to draw the overlay on", input.clip.string()));
  writer->Close();
  std::filesystem::rename(partial, path);
}

}  // namespace tumbletrace
