// Frame sources: a video file (OpenCV's FFmpeg back end) or a folder of numbered images
// (png, tif, jpg; 8- and 16-bit kept at full depth). Frames are streamed one at a time,
// never all held in memory.
#pragma once

#include <filesystem>
#include <memory>
#include <opencv2/core.hpp>
#include <optional>
#include <string>
#include <vector>

namespace tumbletrace {

struct Frame {
  int index = 0;   // frame number in the clip (its time is index / capture_fps)
  cv::Mat image;   // single channel, CV_8U or CV_16U (colour input is converted to grey)
};

struct ClipInfo {
  std::string kind;                 // "video" or "images"
  cv::Size size;                    // width, height in px
  int bit_depth = 8;                // 8 or 16
  int first_index = 0;              // first frame number present
  int last_index = -1;              // last frame number present (-1: unknown until read)
  int frame_count = -1;             // frames the file or folder says it holds (-1: unknown)
  double file_fps = 0.0;            // the rate written in a video file (0: none)
  std::vector<int> missing_frames;  // numbers absent from an image sequence
};

class FrameSource {
 public:
  virtual ~FrameSource() = default;
  // The next frame of the range, or false at the end. A video that ends early or cannot be
  // decoded mid-way throws InputError naming the file and the frame.
  virtual bool Next(Frame* frame) = 0;
  virtual const ClipInfo& info() const = 0;
};

// Opens a clip: a video file or a folder of numbered images (the frame number is the last
// run of digits in each file name). Only frames first..last (inclusive) are delivered.
// Throws InputError naming the path when it is missing, unreadable, empty or not a clip.
std::unique_ptr<FrameSource> OpenClip(const std::filesystem::path& clip,
                                      std::optional<int> first_frame = std::nullopt,
                                      std::optional<int> last_frame = std::nullopt);

// Plain-language warnings about the clip against the session's capture rate: a file rate
// that differs (a playback rate, common practice for high-speed cameras), and frames missing
// from an image sequence.
std::vector<std::string> ClipWarnings(const ClipInfo& info, double capture_fps);

}  // namespace tumbletrace
