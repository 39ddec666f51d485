// H.264 .mp4 output through OpenCV's FFmpeg back end (include/tumbletrace/clip/video_writer.hpp).
//
// Quality: OpenCV 4.6's FFmpeg writer fixes libx264 at CRF 23 and offers no control
// (VIDEOWRITER_PROP_QUALITY is refused at open and by set(); OPENCV_FFMPEG_WRITER_OPTIONS
// reaches only the hardware-acceleration choice, not the encoder). What that does to the
// sub-pixel centroids of rendered dots is measured in tests/clip/video_writer_test.cpp.
// Grey output (isColor = false) is accepted for avc1 and encodes luma only, which keeps
// grey frames closer to the original than colour does (mean absolute error of a noiseless
// rendered frame: 0.8 grey levels against 2.1 through BGR).
#include "tumbletrace/clip/video_writer.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <memory>
#include <opencv2/imgproc.hpp>
#include <opencv2/videoio.hpp>
#include <stdexcept>
#include <string>
#include <vector>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {

struct VideoWriter::Impl {
  cv::VideoWriter writer;
  std::filesystem::path path;
  cv::Size size;
  bool color = false;
  bool open = false;
  cv::Mat converted;  // reused for channel conversion
};

namespace {

std::string Quoted(const std::filesystem::path& path) { return "'" + path.string() + "'"; }

std::string SizeText(cv::Size size) {
  return std::to_string(size.width) + " x " + std::to_string(size.height);
}

}  // namespace

VideoWriter::VideoWriter(const std::filesystem::path& path, cv::Size size, double playback_fps,
                         bool color)
    : impl_(std::make_unique<Impl>()) {
  std::string extension = path.extension().string();
  std::transform(extension.begin(), extension.end(), extension.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  if (extension != ".mp4") {
    throw InputError(Quoted(path) + ": expected a .mp4 file name for H.264 video");
  }
  // H.264 in 4:2:0 needs even dimensions; OpenCV would silently drop the last column or row.
  if (size.width <= 0 || size.height <= 0 || size.width % 2 != 0 || size.height % 2 != 0) {
    throw InputError(Quoted(path) + ": frame size " + SizeText(size) +
                     " px: H.264 needs a positive, even width and height");
  }
  if (!std::isfinite(playback_fps) || playback_fps <= 0.0) {
    throw InputError(Quoted(path) + ": playback rate " + std::to_string(playback_fps) +
                     " fps: expected a positive rate");
  }

  impl_->path = path;
  impl_->size = size;
  impl_->color = color;
  const std::vector<int> params = {cv::VIDEOWRITER_PROP_IS_COLOR, color ? 1 : 0};
  impl_->writer.open(path.string(), cv::CAP_FFMPEG, cv::VideoWriter::fourcc('a', 'v', 'c', '1'),
                     playback_fps, size, params);
  if (!impl_->writer.isOpened()) {
    throw InputError(Quoted(path) +
                     ": cannot open for H.264 (.mp4, avc1) through OpenCV's FFmpeg back end; "
                     "expected a writable file in an existing folder");
  }
  impl_->open = true;
  // Best quality where the back end allows it; OpenCV 4.6's FFmpeg writer returns false and
  // keeps CRF 23 (see the top of this file), which is not an error.
  static_cast<void>(impl_->writer.set(cv::VIDEOWRITER_PROP_QUALITY, 100.0));
}

VideoWriter::~VideoWriter() {
  try {
    Close();
  } catch (...) {
    // A destructor does not throw; Close() reports nothing that could be acted on here.
  }
}

void VideoWriter::Write(const cv::Mat& frame) {
  if (!impl_->open) {
    throw std::logic_error("VideoWriter::Write: " + Quoted(impl_->path) + " is already closed");
  }
  if (frame.empty() || frame.depth() != CV_8U || (frame.channels() != 1 && frame.channels() != 3)) {
    throw std::invalid_argument("VideoWriter::Write: " + Quoted(impl_->path) +
                                ": expected an 8-bit frame with 1 or 3 channels");
  }
  if (frame.size() != impl_->size) {
    throw std::invalid_argument("VideoWriter::Write: " + Quoted(impl_->path) + ": frame of " +
                                SizeText(frame.size()) + " px, the video is " +
                                SizeText(impl_->size) + " px");
  }
  const cv::Mat* out = &frame;
  if (impl_->color && frame.channels() == 1) {
    cv::cvtColor(frame, impl_->converted, cv::COLOR_GRAY2BGR);
    out = &impl_->converted;
  } else if (!impl_->color && frame.channels() == 3) {
    cv::cvtColor(frame, impl_->converted, cv::COLOR_BGR2GRAY);
    out = &impl_->converted;
  }
  impl_->writer.write(*out);
  ++frames_written_;
}

void VideoWriter::Close() {
  if (!impl_ || !impl_->open) return;
  impl_->open = false;
  impl_->writer.release();  // flushes the encoder and writes the trailer
}

}  // namespace tumbletrace
