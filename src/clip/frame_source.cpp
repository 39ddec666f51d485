// Frame sources: a folder of numbered images or a video file read through OpenCV's FFmpeg
// back end (include/tumbletrace/clip/frame_source.hpp).
//
// What ClipInfo describes: `frame_count` is what the whole folder or file holds (for a video,
// the count the container declares, a hint only); `first_index`, `last_index` and
// `missing_frames` describe the frames of the requested range. A video's `last_index` stays
// -1 until its last frame has been delivered.
//
// Memory: a source holds at most one decoded frame (the image folder keeps the first image,
// read at opening for its size and depth, until the first Next() hands it over; the video
// source keeps one colour buffer that each decoded frame overwrites).
//
// Video behaviour of OpenCV 4.6 with FFmpeg, as measured on the H.264 .mp4 files that
// clip/video_writer.cpp writes (tests/clip/frame_source_test.cpp):
// - CAP_PROP_FRAME_COUNT is the container's count (30 for 30 frames written) and
//   CAP_PROP_FPS the written playback rate. Other files may declare 0, a negative or a
//   rounded count, so the count is a hint: reading stops where decoding stops.
// - The writer puts the index ('moov' box) after the frame data, so a file cut short loses
//   its index and does not open at all. A file whose index survives but whose frame data is
//   damaged opens, declares its full count, and decoding stops early without any error
//   from OpenCV; the only sign is the count, which Next() checks.
// - Seeking with CAP_PROP_POS_FRAMES is not exact for H.264 (it lands on a key frame and
//   relies on time stamps), so the source reaches the first frame by grabbing frame by frame.
#include "tumbletrace/clip/frame_source.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <climits>
#include <cmath>
#include <cstddef>
#include <filesystem>
#include <memory>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>
#include <opencv2/videoio.hpp>
#include <optional>
#include <string>
#include <system_error>
#include <utility>
#include <vector>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

constexpr const char* kClipExpected =
    "the session's `clip` names a video file or a folder of numbered images";

std::string Lowercase(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return text;
}

bool IsImageExtension(const fs::path& path) {
  const std::string extension = Lowercase(path.extension().string());
  return extension == ".png" || extension == ".tif" || extension == ".tiff" ||
         extension == ".jpg" || extension == ".jpeg";
}

// The frame number of an image file: the last run of digits in its name without the
// extension (frame_000123.png -> 123). Empty when the name holds no digits.
std::optional<int> FrameNumberOf(const fs::path& file) {
  const std::string stem = file.stem().string();
  std::size_t end = stem.size();
  while (end > 0 && !std::isdigit(static_cast<unsigned char>(stem[end - 1]))) --end;
  if (end == 0) return std::nullopt;
  std::size_t begin = end;
  while (begin > 0 && std::isdigit(static_cast<unsigned char>(stem[begin - 1]))) --begin;
  int number = 0;
  const auto [last, error] = std::from_chars(stem.data() + begin, stem.data() + end, number);
  if (error != std::errc() || last != stem.data() + end) {
    throw InputError(fmt::format(
        "{}: the frame number {} in the file name is too large; expected numbers below {}",
        file.string(), stem.substr(begin, end - begin), INT_MAX));
  }
  return number;
}

// Checks the requested range once, where it comes in.
void CheckRange(const fs::path& clip, std::optional<int> first_frame,
                std::optional<int> last_frame) {
  if (first_frame && *first_frame < 0) {
    throw InputError(fmt::format("{}: first frame {}: expected a frame number of 0 or more",
                                 clip.string(), *first_frame));
  }
  if (first_frame && last_frame && *first_frame > *last_frame) {
    throw InputError(fmt::format(
        "{}: frame range {}..{}: the first frame is after the last; expected first <= last",
        clip.string(), *first_frame, *last_frame));
  }
}

// A frame as the pipeline takes it: one channel, 8 or 16 bit. `what` names the source of
// `image` in an error.
cv::Mat ToGrey(cv::Mat image, const std::string& what) {
  if (image.depth() != CV_8U && image.depth() != CV_16U) {
    throw InputError(
        fmt::format("{}: pixels of OpenCV depth {}; expected 8- or 16-bit unsigned integers", what,
                    image.depth()));
  }
  cv::Mat grey;
  switch (image.channels()) {
    case 1:
      return image;
    case 3:
      cv::cvtColor(image, grey, cv::COLOR_BGR2GRAY);
      return grey;
    case 4:
      cv::cvtColor(image, grey, cv::COLOR_BGRA2GRAY);
      return grey;
    default:
      throw InputError(fmt::format("{}: {} channels; expected grey, colour or colour with alpha",
                                   what, image.channels()));
  }
}

struct NumberedImage {
  int number = 0;
  fs::path path;
};

class ImageFolderSource final : public FrameSource {
 public:
  ImageFolderSource(const fs::path& folder, std::optional<int> first_frame,
                    std::optional<int> last_frame) {
    std::vector<NumberedImage> all = ListNumberedImages(folder);
    if (all.empty()) {
      throw InputError(fmt::format(
          "{}: the folder holds no numbered images (png, tif, tiff, jpg or jpeg with a frame "
          "number in the file name); {}",
          folder.string(), kClipExpected));
    }
    std::sort(all.begin(), all.end(),
              [](const NumberedImage& a, const NumberedImage& b) { return a.number < b.number; });
    for (std::size_t i = 1; i < all.size(); ++i) {
      if (all[i].number == all[i - 1].number) {
        throw InputError(fmt::format(
            "{}: {} and {} both carry frame number {}; expected one image per frame number",
            folder.string(), all[i - 1].path.filename().string(), all[i].path.filename().string(),
            all[i].number));
      }
    }
    info_.kind = "images";
    info_.frame_count = static_cast<int>(all.size());

    const int first = first_frame.value_or(INT_MIN);
    const int last = last_frame.value_or(INT_MAX);
    for (NumberedImage& image : all) {
      if (image.number >= first && image.number <= last) images_.push_back(std::move(image));
    }
    if (images_.empty()) {
      throw InputError(fmt::format(
          "{}: no image in the frame range {}..{}; the folder holds frames {} to {}",
          folder.string(), first_frame ? std::to_string(*first_frame) : "start",
          last_frame ? std::to_string(*last_frame) : "end", all.front().number, all.back().number));
    }
    info_.first_index = images_.front().number;
    info_.last_index = images_.back().number;

    // A file name with a date or a serial in it would make a "sequence" of mostly gaps; the
    // bound keeps that from filling memory with missing numbers (every tenth frame saved is
    // well inside it).
    const long long span = static_cast<long long>(info_.last_index) - info_.first_index + 1;
    const long long absent = span - static_cast<long long>(images_.size());
    if (absent > 100LL * static_cast<long long>(images_.size()) + 10000) {
      throw InputError(fmt::format(
          "{}: the frame numbers in the file names run from {} to {} but there are only {} "
          "images; expected a numbered image sequence (is the last number in each name the "
          "frame number?)",
          folder.string(), info_.first_index, info_.last_index, images_.size()));
    }
    for (std::size_t i = 1; i < images_.size(); ++i) {
      for (int n = images_[i - 1].number + 1; n < images_[i].number; ++n) {
        info_.missing_frames.push_back(n);
      }
    }

    pending_ = Read(images_.front().path);
    info_.size = pending_.size();
    info_.bit_depth = pending_.depth() == CV_16U ? 16 : 8;
  }

  bool Next(Frame* frame) override {
    if (next_ >= images_.size()) return false;
    const NumberedImage& image = images_[next_];
    cv::Mat grey = next_ == 0 ? std::move(pending_) : Read(image.path);
    pending_.release();
    if (grey.size() != info_.size) {
      throw InputError(fmt::format(
          "{}: {} x {} px, but the sequence starts with {} x {} px images; expected one size "
          "for every image",
          image.path.string(), grey.cols, grey.rows, info_.size.width, info_.size.height));
    }
    const int bit_depth = grey.depth() == CV_16U ? 16 : 8;
    if (bit_depth != info_.bit_depth) {
      throw InputError(fmt::format(
          "{}: {}-bit pixels, but the sequence starts with {}-bit images; expected one bit "
          "depth for every image",
          image.path.string(), bit_depth, info_.bit_depth));
    }
    frame->index = image.number;
    frame->image = std::move(grey);
    ++next_;
    return true;
  }

  const ClipInfo& info() const override { return info_; }

 private:
  static std::vector<NumberedImage> ListNumberedImages(const fs::path& folder) {
    std::vector<NumberedImage> images;
    try {
      for (const fs::directory_entry& entry : fs::directory_iterator(folder)) {
        if (!entry.is_regular_file() || !IsImageExtension(entry.path())) continue;
        if (const std::optional<int> number = FrameNumberOf(entry.path())) {
          images.push_back({*number, entry.path()});
        }
      }
    } catch (const fs::filesystem_error& error) {
      throw InputError(fmt::format("{}: the folder cannot be listed ({}); {}", folder.string(),
                                   error.code().message(), kClipExpected));
    }
    return images;
  }

  static cv::Mat Read(const fs::path& path) {
    cv::Mat image = cv::imread(path.string(), cv::IMREAD_ANYDEPTH | cv::IMREAD_ANYCOLOR);
    if (image.empty()) {
      throw InputError(fmt::format(
          "{}: the image cannot be read; expected a readable png, tif or jpg file", path.string()));
    }
    return ToGrey(std::move(image), path.string());
  }

  ClipInfo info_;
  std::vector<NumberedImage> images_;  // the range, sorted by frame number
  std::size_t next_ = 0;               // position in images_ of the next frame
  cv::Mat pending_;                    // the first image, read at opening
};

class VideoSource final : public FrameSource {
 public:
  VideoSource(const fs::path& file, std::optional<int> first_frame, std::optional<int> last_frame)
      : file_(file), last_frame_(last_frame.value_or(INT_MAX)) {
    if (IsImageExtension(file)) {
      throw InputError(fmt::format(
          "{}: a single image; {} (put the images of the clip in a folder and name the folder)",
          file.string(), kClipExpected));
    }
    if (!capture_.open(file.string(), cv::CAP_FFMPEG) || !capture_.isOpened()) {
      throw InputError(fmt::format(
          "{}: the video cannot be opened by OpenCV's FFmpeg back end (not a video, or a "
          "damaged or truncated file); {}",
          file.string(), kClipExpected));
    }
    info_.kind = "video";
    info_.bit_depth = 8;
    info_.size = cv::Size(static_cast<int>(capture_.get(cv::CAP_PROP_FRAME_WIDTH)),
                          static_cast<int>(capture_.get(cv::CAP_PROP_FRAME_HEIGHT)));
    if (info_.size.width <= 0 || info_.size.height <= 0) {
      throw InputError(
          fmt::format("{}: the file holds no video stream; {}", file.string(), kClipExpected));
    }
    const double declared = capture_.get(cv::CAP_PROP_FRAME_COUNT);
    if (std::isfinite(declared) && declared >= 1.0 && declared <= INT_MAX) {
      info_.frame_count = static_cast<int>(std::lround(declared));
    }
    const double fps = capture_.get(cv::CAP_PROP_FPS);
    if (std::isfinite(fps) && fps > 0.0) info_.file_fps = fps;
    info_.first_index = first_frame.value_or(0);
    info_.last_index = -1;

    // Reach the first frame by decoding: grab() skips the colour conversion.
    while (position_ < info_.first_index) {
      if (!capture_.grab()) {
        ThrowIfTruncated();
        throw InputError(fmt::format(
            "{}: the first frame requested, {}, is beyond the end of the video ({} frames); "
            "expected a first frame of at most {}",
            file.string(), info_.first_index, position_, position_ - 1));
      }
      ++position_;
    }
  }

  bool Next(Frame* frame) override {
    if (done_) return false;
    if (position_ > last_frame_ || !capture_.read(colour_)) {
      if (position_ <= last_frame_) ThrowIfTruncated();
      if (position_ == 0) {
        throw InputError(fmt::format("{}: no frame of the video can be decoded; {}", file_.string(),
                                     kClipExpected));
      }
      done_ = true;
      if (position_ > info_.first_index) info_.last_index = position_ - 1;
      capture_.release();
      return false;
    }
    if (colour_.size() != info_.size) {
      throw InputError(fmt::format(
          "{}: frame {} is {} x {} px, but the video declares {} x {} px; expected one size "
          "for every frame",
          file_.string(), position_, colour_.cols, colour_.rows, info_.size.width,
          info_.size.height));
    }
    // Colour frames from the decoder become grey here; the caller's own buffer is reused
    // when it has the right size and type.
    if (colour_.depth() != CV_8U) {
      throw InputError(fmt::format("{}: frame {}: pixels of OpenCV depth {}; expected 8-bit video",
                                   file_.string(), position_, colour_.depth()));
    }
    if (colour_.channels() == 1) {
      colour_.copyTo(frame->image);
    } else {
      cv::cvtColor(colour_, frame->image,
                   colour_.channels() == 4 ? cv::COLOR_BGRA2GRAY : cv::COLOR_BGR2GRAY);
    }
    frame->index = position_;
    ++position_;
    return true;
  }

  const ClipInfo& info() const override { return info_; }

 private:
  // Decoding stopped after `position_` frames. A container that declares more than one frame
  // beyond that holds a truncated or damaged stream (a count off by one is common and
  // tolerated).
  void ThrowIfTruncated() const {
    if (info_.frame_count > 0 && position_ < info_.frame_count - 1) {
      throw InputError(fmt::format(
          "{}: the video ends after frame {} of the {} it declares (truncated or damaged file)",
          file_.string(), position_, info_.frame_count));
    }
  }

  fs::path file_;
  int last_frame_ = INT_MAX;
  cv::VideoCapture capture_;
  ClipInfo info_;
  int position_ = 0;  // index of the next frame the decoder delivers
  bool done_ = false;
  cv::Mat colour_;  // the decoder's frame, overwritten by each read
};

// A rate as a person writes it: 1000, 29.97, 23.976.
std::string RateText(double fps) {
  std::string text = fmt::format("{:.3f}", fps);
  while (text.back() == '0') text.pop_back();
  if (text.back() == '.') text.pop_back();
  return text;
}

}  // namespace

std::unique_ptr<FrameSource> OpenClip(const fs::path& clip, std::optional<int> first_frame,
                                      std::optional<int> last_frame) {
  CheckRange(clip, first_frame, last_frame);
  std::error_code error;
  const fs::file_status status = fs::status(clip, error);
  if (!fs::exists(status)) {
    throw InputError(fmt::format("{}: no such file or folder ({})", clip.string(), kClipExpected));
  }
  if (fs::is_directory(status)) {
    return std::make_unique<ImageFolderSource>(clip, first_frame, last_frame);
  }
  if (fs::is_regular_file(status)) {
    return std::make_unique<VideoSource>(clip, first_frame, last_frame);
  }
  throw InputError(
      fmt::format("{}: neither a regular file nor a folder; {}", clip.string(), kClipExpected));
}

std::vector<std::string> ClipWarnings(const ClipInfo& info, double capture_fps) {
  std::vector<std::string> warnings;
  // An invalid rate is refused where the session is read; nothing to compare it with here.
  const bool rate_known = std::isfinite(capture_fps) && capture_fps > 0.0;
  if (rate_known && info.file_fps > 0.0 &&
      std::abs(info.file_fps - capture_fps) > 0.01 * capture_fps) {
    warnings.push_back(fmt::format(
        "the video file states {} frames/s but the session's capture rate is {} frames/s; "
        "times use the capture rate (high-speed cameras usually write a playback rate into "
        "the file) — check capture_fps if this is not the case",
        RateText(info.file_fps), RateText(capture_fps)));
  }
  // A clip of a throw filmed at under 100 frames/s is suspicious: 30 or 25 frames/s are the
  // playback rates such cameras write, not rates they capture at.
  if (rate_known && capture_fps < 100.0) {
    warnings.push_back(fmt::format(
        "capture_fps is {} frames/s, which is a typical playback rate, not a high-speed "
        "capture rate: check the session's capture_fps (a wrong rate scales every speed and "
        "the fitted gravity)",
        RateText(capture_fps)));
  }
  if (!info.missing_frames.empty()) {
    constexpr std::size_t kListed = 10;
    const std::size_t count = info.missing_frames.size();
    std::string numbers;
    for (std::size_t i = 0; i < std::min(count, kListed); ++i) {
      if (i > 0) numbers += ", ";
      numbers += std::to_string(info.missing_frames[i]);
    }
    if (count > kListed) numbers += fmt::format(" and {} more", count - kListed);
    warnings.push_back(fmt::format(
        "{} {} {} missing from the image sequence (the other frames keep their numbers and "
        "times; a gap in the middle of the flight leaves fewer observations there)",
        count == 1 ? "frame" : "frames", numbers, count == 1 ? "is" : "are"));
  }
  return warnings;
}

}  // namespace tumbletrace
