// Writes frames to an H.264 .mp4 through OpenCV's FFmpeg back end.
#pragma once

#include <filesystem>
#include <memory>
#include <opencv2/core.hpp>

namespace tumbletrace {

class VideoWriter {
 public:
  // Opens `path` for frames of `size`; `playback_fps` is the rate written in the file
  // (high-speed clips usually carry a playback rate, not the capture rate). Colour output
  // when `color`; single-channel frames are converted. Throws InputError when the file
  // cannot be opened for H.264.
  VideoWriter(const std::filesystem::path& path, cv::Size size, double playback_fps,
              bool color = false);
  ~VideoWriter();
  VideoWriter(const VideoWriter&) = delete;
  VideoWriter& operator=(const VideoWriter&) = delete;

  void Write(const cv::Mat& frame);  // 8-bit, 1 or 3 channels, of the opened size
  void Close();
  int frames_written() const { return frames_written_; }

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  int frames_written_ = 0;
};

}  // namespace tumbletrace
