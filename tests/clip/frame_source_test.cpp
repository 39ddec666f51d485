#include "tumbletrace/clip/frame_source.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <memory>
#include <opencv2/imgcodecs.hpp>
#include <optional>
#include <string>
#include <system_error>
#include <utility>
#include <vector>

#include "tumbletrace/clip/video_writer.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

// A folder in the temporary directory, unique to the test and the process; removed after.
class TempFolder {
 public:
  TempFolder() {
    const ::testing::TestInfo* test = ::testing::UnitTest::GetInstance()->current_test_info();
    path_ = fs::temp_directory_path() /
            ("tumbletrace_frame_source_" + std::string(test->test_suite_name()) + "_" +
             test->name() + "_" + std::to_string(::getpid()));
    fs::remove_all(path_);
    fs::create_directories(path_);
  }
  ~TempFolder() {
    std::error_code ignored;
    fs::remove_all(path_, ignored);
  }
  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

// Frame `i` of a test clip: a flat grey level that identifies it, with a gradient so that
// the picture is not trivially flat.
cv::Mat LevelFrame8(cv::Size size, int level) {
  cv::Mat frame(size, CV_8UC1);
  for (int y = 0; y < size.height; ++y) {
    for (int x = 0; x < size.width; ++x) {
      frame.at<std::uint8_t>(y, x) = static_cast<std::uint8_t>(level + (x + y) % 4);
    }
  }
  return frame;
}

int Level8(int index) { return 20 + 10 * index; }

void WritePng(const fs::path& path, const cv::Mat& image) {
  ASSERT_TRUE(cv::imwrite(path.string(), image)) << path;
}

// Every frame of a source, in order.
std::vector<Frame> ReadAll(FrameSource& source) {
  std::vector<Frame> frames;
  Frame frame;
  while (source.Next(&frame)) {
    frames.push_back({frame.index, frame.image.clone()});
  }
  return frames;
}

std::vector<int> Indices(const std::vector<Frame>& frames) {
  std::vector<int> indices;
  for (const Frame& frame : frames) indices.push_back(frame.index);
  return indices;
}

// Whether `text` holds `part`; the failure shows both.
::testing::AssertionResult Contains(const std::string& text, const std::string& part) {
  if (text.find(part) != std::string::npos) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "'" << text << "' does not contain '" << part << "'";
}

// The message of the InputError that `action` throws, or a failure.
template <typename Action>
std::string InputErrorMessage(Action action) {
  try {
    action();
  } catch (const InputError& error) {
    return error.what();
  }
  ADD_FAILURE() << "expected InputError";
  return "";
}

// A folder of 8-bit PNGs numbered `numbers`, each at Level8(number).
void WriteLevelSequence(const fs::path& folder, const std::vector<int>& numbers,
                        cv::Size size = cv::Size(32, 24)) {
  for (int n : numbers) {
    char name[32];
    std::snprintf(name, sizeof(name), "frame_%06d.png", n);
    WritePng(folder / name, LevelFrame8(size, Level8(n)));
  }
}

// ---------------------------------------------------------------- image folders

TEST(ImageFolder, EightBitPngsInOrderWithTheirValues) {
  const TempFolder folder;
  const cv::Size size(40, 30);
  // Written out of order, one with an upper-case extension, beside files that are not frames.
  for (int n : {2, 0, 3, 1}) {
    const std::string name = "shot7_frame_" + std::to_string(n) + (n == 3 ? ".PNG" : ".png");
    WritePng(folder.path() / name, LevelFrame8(size, Level8(n)));
  }
  std::ofstream(folder.path() / "notes_1.txt") << "not an image\n";
  WritePng(folder.path() / "background.png", LevelFrame8(size, 0));  // no number: ignored

  const std::unique_ptr<FrameSource> source = OpenClip(folder.path());
  const ClipInfo& info = source->info();
  EXPECT_EQ(info.kind, "images");
  EXPECT_EQ(info.size, size);
  EXPECT_EQ(info.bit_depth, 8);
  EXPECT_EQ(info.first_index, 0);
  EXPECT_EQ(info.last_index, 3);
  EXPECT_EQ(info.frame_count, 4);
  EXPECT_EQ(info.file_fps, 0.0);
  EXPECT_TRUE(info.missing_frames.empty());

  const std::vector<Frame> frames = ReadAll(*source);
  ASSERT_EQ(Indices(frames), (std::vector<int>{0, 1, 2, 3}));
  for (const Frame& frame : frames) {
    ASSERT_EQ(frame.image.type(), CV_8UC1);
    EXPECT_EQ(cv::norm(frame.image, LevelFrame8(size, Level8(frame.index)), cv::NORM_INF), 0.0)
        << "frame " << frame.index;
  }
  Frame after;
  EXPECT_FALSE(source->Next(&after));  // the end stays the end
}

// 16-bit images keep their full depth: values above 255 come through unchanged.
TEST(ImageFolder, SixteenBitPngAndTifKeepTheirValues) {
  for (const std::string extension : {".png", ".tif", ".tiff"}) {
    SCOPED_TRACE(extension);
    const TempFolder folder;
    const cv::Size size(24, 16);
    std::vector<cv::Mat> written;
    for (int n = 0; n < 3; ++n) {
      cv::Mat image(size, CV_16UC1);
      for (int y = 0; y < size.height; ++y) {
        for (int x = 0; x < size.width; ++x) {
          image.at<std::uint16_t>(y, x) = static_cast<std::uint16_t>(300 + 20000 * n + 97 * x + y);
        }
      }
      written.push_back(image);
      ASSERT_TRUE(cv::imwrite(
          (folder.path() / ("img" + std::to_string(100 + n) + extension)).string(), image));
    }
    const std::unique_ptr<FrameSource> source = OpenClip(folder.path());
    EXPECT_EQ(source->info().bit_depth, 16);
    EXPECT_EQ(source->info().first_index, 100);
    const std::vector<Frame> frames = ReadAll(*source);
    ASSERT_EQ(Indices(frames), (std::vector<int>{100, 101, 102}));
    for (std::size_t i = 0; i < frames.size(); ++i) {
      ASSERT_EQ(frames[i].image.type(), CV_16UC1);
      EXPECT_EQ(cv::norm(frames[i].image, written[i], cv::NORM_INF), 0.0) << i;
    }
  }
}

TEST(ImageFolder, MissingFrameIsReportedAndSkipped) {
  const TempFolder folder;
  WriteLevelSequence(folder.path(), {10, 11, 13, 14});
  const std::unique_ptr<FrameSource> source = OpenClip(folder.path());
  EXPECT_EQ(source->info().missing_frames, std::vector<int>{12});
  EXPECT_EQ(source->info().frame_count, 4);
  const std::vector<Frame> frames = ReadAll(*source);
  ASSERT_EQ(Indices(frames), (std::vector<int>{10, 11, 13, 14}));
  for (const Frame& frame : frames) {
    EXPECT_EQ(frame.image.at<std::uint8_t>(0, 0), Level8(frame.index)) << frame.index;
  }
}

TEST(ImageFolder, DeliversOnlyTheRange) {
  const TempFolder folder;
  WriteLevelSequence(folder.path(), {0, 1, 2, 3, 4, 5, 6, 7, 8, 9});
  {
    const std::unique_ptr<FrameSource> source = OpenClip(folder.path(), 3, 6);
    EXPECT_EQ(source->info().first_index, 3);
    EXPECT_EQ(source->info().last_index, 6);
    const std::vector<Frame> frames = ReadAll(*source);
    ASSERT_EQ(Indices(frames), (std::vector<int>{3, 4, 5, 6}));
    EXPECT_EQ(frames[0].image.at<std::uint8_t>(0, 0), Level8(3));
  }
  // A last frame beyond the end ends at the end; one bound alone is a range too.
  EXPECT_EQ(Indices(ReadAll(*OpenClip(folder.path(), 7, 500))), (std::vector<int>{7, 8, 9}));
  EXPECT_EQ(Indices(ReadAll(*OpenClip(folder.path(), std::nullopt, 1))), (std::vector<int>{0, 1}));
  EXPECT_EQ(Indices(ReadAll(*OpenClip(folder.path(), 5, 5))), (std::vector<int>{5}));
}

TEST(ImageFolder, MissingFramesAreCountedInsideTheRangeOnly) {
  const TempFolder folder;
  WriteLevelSequence(folder.path(), {0, 2, 3, 5, 8});
  EXPECT_EQ(OpenClip(folder.path())->info().missing_frames, (std::vector<int>{1, 4, 6, 7}));
  EXPECT_EQ(OpenClip(folder.path(), 2, 5)->info().missing_frames, std::vector<int>{4});
}

TEST(ImageFolder, ColourJpgBecomesGrey) {
  const TempFolder folder;
  // BGR (50, 100, 150): grey 0.114 B + 0.587 G + 0.299 R = 109.25 (ITU-R BT.601 weights,
  // as in OpenCV's cvtColor documentation).
  const cv::Mat colour(24, 32, CV_8UC3, cv::Scalar(50, 100, 150));
  for (const std::string name : {"c_001.jpg", "c_002.JPEG"}) {
    ASSERT_TRUE(cv::imwrite((folder.path() / name).string(), colour));
  }
  const std::unique_ptr<FrameSource> source = OpenClip(folder.path());
  EXPECT_EQ(source->info().bit_depth, 8);
  const std::vector<Frame> frames = ReadAll(*source);
  ASSERT_EQ(Indices(frames), (std::vector<int>{1, 2}));
  for (const Frame& frame : frames) {
    ASSERT_EQ(frame.image.type(), CV_8UC1);
    EXPECT_NEAR(cv::mean(frame.image)[0], 109.25, 2.0);
  }
}

TEST(ImageFolder, ColourWithAlphaBecomesGrey) {
  const TempFolder folder;
  WritePng(folder.path() / "a_1.png", cv::Mat(8, 8, CV_8UC4, cv::Scalar(50, 100, 150, 255)));
  const std::vector<Frame> frames = ReadAll(*OpenClip(folder.path()));
  ASSERT_EQ(frames.size(), 1u);
  ASSERT_EQ(frames[0].image.type(), CV_8UC1);
  EXPECT_NEAR(frames[0].image.at<std::uint8_t>(0, 0), 109.25, 1.0);
}

TEST(ImageFolder, RefusesAnImageOfAnotherSize) {
  const TempFolder folder;
  WriteLevelSequence(folder.path(), {0, 1}, cv::Size(32, 24));
  WriteLevelSequence(folder.path(), {2}, cv::Size(30, 24));
  WriteLevelSequence(folder.path(), {3}, cv::Size(28, 24));
  const std::unique_ptr<FrameSource> source = OpenClip(folder.path());
  Frame frame;
  ASSERT_TRUE(source->Next(&frame));
  ASSERT_TRUE(source->Next(&frame));
  const std::string message = InputErrorMessage([&] { source->Next(&frame); });
  EXPECT_TRUE(Contains(message, (folder.path() / "frame_000002.png").string()));
  EXPECT_TRUE(Contains(message, "30 x 24"));
}

TEST(ImageFolder, RefusesMixedBitDepths) {
  const TempFolder folder;
  WriteLevelSequence(folder.path(), {0});
  WritePng(folder.path() / "frame_000001.png", cv::Mat(24, 32, CV_16UC1, cv::Scalar(1000)));
  const std::unique_ptr<FrameSource> source = OpenClip(folder.path());
  Frame frame;
  ASSERT_TRUE(source->Next(&frame));
  EXPECT_TRUE(Contains(InputErrorMessage([&] { source->Next(&frame); }), "frame_000001.png"));
}

TEST(ImageFolder, RefusesAMissingFolder) {
  const TempFolder parent;
  const fs::path missing = parent.path() / "no_such_clip";
  const std::string message = InputErrorMessage([&] { OpenClip(missing); });
  EXPECT_TRUE(Contains(message, missing.string() + ": no such file or folder"));
  EXPECT_TRUE(Contains(message, "`clip`"));
}

TEST(ImageFolder, RefusesAFolderWithoutNumberedImages) {
  const TempFolder folder;
  EXPECT_TRUE(
      Contains(InputErrorMessage([&] { OpenClip(folder.path()); }), folder.path().string()));
  // Files that are not numbered images do not make a clip either.
  std::ofstream(folder.path() / "frame_0001.txt") << "text\n";
  WritePng(folder.path() / "background.png", LevelFrame8(cv::Size(8, 8), 0));
  fs::create_directories(folder.path() / "take_0002.png");  // a folder, not an image
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(folder.path()); }), "no numbered images"));
}

TEST(ImageFolder, RefusesTwoImagesWithOneNumber) {
  const TempFolder folder;
  WritePng(folder.path() / "frame_1.png", LevelFrame8(cv::Size(8, 8), 0));
  WritePng(folder.path() / "frame_001.png", LevelFrame8(cv::Size(8, 8), 0));
  const std::string message = InputErrorMessage([&] { OpenClip(folder.path()); });
  EXPECT_TRUE(Contains(message, "frame_1.png"));
  EXPECT_TRUE(Contains(message, "frame_001.png"));
  EXPECT_TRUE(Contains(message, "frame number 1"));
}

// A date in the file names is not a frame number: the "sequence" would be almost all gaps.
TEST(ImageFolder, RefusesNumbersThatAreNotASequence) {
  const TempFolder folder;
  WritePng(folder.path() / "take_1.png", LevelFrame8(cv::Size(8, 8), 0));
  WritePng(folder.path() / "take_20240611.png", LevelFrame8(cv::Size(8, 8), 0));
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(folder.path()); }),
                       "run from 1 to 20240611 but there are only 2 images"));
  WritePng(folder.path() / "take_99999999999.png", LevelFrame8(cv::Size(8, 8), 0));
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(folder.path()); }),
                       "take_99999999999.png: the frame number 99999999999"));
}

TEST(ImageFolder, RefusesAnUnreadableImageNamingIt) {
  const TempFolder folder;
  WriteLevelSequence(folder.path(), {0, 1});
  const fs::path broken = folder.path() / "frame_000002.png";
  std::ofstream(broken, std::ios::binary) << "not a png at all";
  const std::unique_ptr<FrameSource> source = OpenClip(folder.path());
  Frame frame;
  ASSERT_TRUE(source->Next(&frame));
  ASSERT_TRUE(source->Next(&frame));
  EXPECT_TRUE(Contains(InputErrorMessage([&] { source->Next(&frame); }), broken.string()));
  // As the first image of the range it is refused at opening.
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(folder.path(), 2); }), broken.string()));
}

TEST(ImageFolder, RefusesBadRanges) {
  const TempFolder folder;
  WriteLevelSequence(folder.path(), {0, 1, 2});
  EXPECT_TRUE(
      Contains(InputErrorMessage([&] { OpenClip(folder.path(), 2, 1); }), "frame range 2..1"));
  EXPECT_THROW(OpenClip(folder.path(), -1, 1), InputError);
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(folder.path(), 10, 20); }),
                       "no image in the frame range 10..20"));
}

TEST(OpenClip, RefusesASingleImageFile) {
  const TempFolder folder;
  const fs::path image = folder.path() / "frame_0001.png";
  WritePng(image, LevelFrame8(cv::Size(8, 8), 0));
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(image); }), image.string()));
}

// ---------------------------------------------------------------- video files

// A clip written by the project's writer: frame i at Level8(i), 320 x 240, 30 frames/s
// playback rate.
void WriteLevelVideo(const fs::path& path, int frame_count) {
  const cv::Size size(320, 240);
  VideoWriter writer(path, size, 30.0);
  for (int i = 0; i < frame_count; ++i) writer.Write(LevelFrame8(size, Level8(i)));
  writer.Close();
}

// Frames of sensor-like noise (fixed seed), so that every frame carries a similar share of
// the file's bytes and a cut lands in the middle of the frame data.
void WriteNoiseVideo(const fs::path& path, int frame_count) {
  const cv::Size size(320, 240);
  VideoWriter writer(path, size, 30.0);
  cv::RNG rng(20240611);
  for (int i = 0; i < frame_count; ++i) {
    cv::Mat frame(size, CV_8UC1);
    rng.fill(frame, cv::RNG::UNIFORM, 0, 256);
    writer.Write(frame);
  }
  writer.Close();
}

std::vector<char> ReadBytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  return std::vector<char>(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
}

void WriteBytes(const fs::path& path, const std::vector<char>& bytes, std::size_t count) {
  std::ofstream out(path, std::ios::binary);
  out.write(bytes.data(), static_cast<std::streamsize>(count));
}

// Byte range [begin, end) of the payload of the top-level 'mdat' box of an MP4 file
// (ISO/IEC 14496-12, 4.2: a box is a 32-bit big-endian size, a 4-character type, and a
// 64-bit size after the type when the 32-bit size is 1).
std::pair<std::size_t, std::size_t> MdatPayload(const std::vector<char>& bytes) {
  auto be = [&](std::size_t at, int n) {
    std::uint64_t value = 0;
    for (int k = 0; k < n; ++k) value = (value << 8) | static_cast<unsigned char>(bytes[at + k]);
    return value;
  };
  std::size_t at = 0;
  while (at + 8 <= bytes.size()) {
    std::uint64_t size = be(at, 4);
    std::size_t header = 8;
    if (size == 1) {
      size = be(at + 8, 8);
      header = 16;
    } else if (size == 0) {
      size = bytes.size() - at;
    }
    if (std::string(&bytes[at + 4], 4) == "mdat") return {at + header, at + size};
    if (size < header) break;
    at += size;
  }
  return {0, 0};
}

TEST(Video, TwentyFramesReadBackWithTheirRateAndValues) {
  const TempFolder folder;
  const fs::path video = folder.path() / "clip.mp4";
  WriteLevelVideo(video, 20);

  const std::unique_ptr<FrameSource> source = OpenClip(video);
  const ClipInfo& info = source->info();
  EXPECT_EQ(info.kind, "video");
  EXPECT_EQ(info.size, cv::Size(320, 240));
  EXPECT_EQ(info.bit_depth, 8);
  EXPECT_EQ(info.frame_count, 20);  // the count the container declares
  EXPECT_DOUBLE_EQ(info.file_fps, 30.0);
  EXPECT_EQ(info.first_index, 0);
  EXPECT_EQ(info.last_index, -1);  // unknown until read
  EXPECT_TRUE(info.missing_frames.empty());

  const std::vector<Frame> frames = ReadAll(*source);
  ASSERT_EQ(frames.size(), 20u);
  for (std::size_t i = 0; i < frames.size(); ++i) {
    EXPECT_EQ(frames[i].index, static_cast<int>(i));
    ASSERT_EQ(frames[i].image.type(), CV_8UC1);
    ASSERT_EQ(frames[i].image.size(), cv::Size(320, 240));
    // Levels 10 apart tell the frames apart through the codec's loss.
    EXPECT_NEAR(cv::mean(frames[i].image)[0], Level8(static_cast<int>(i)) + 1.5, 3.0) << i;
  }
  EXPECT_EQ(source->info().last_index, 19);
  Frame after;
  EXPECT_FALSE(source->Next(&after));
}

TEST(Video, DeliversOnlyTheRange) {
  const TempFolder folder;
  const fs::path video = folder.path() / "clip.mp4";
  WriteLevelVideo(video, 20);
  {
    const std::unique_ptr<FrameSource> source = OpenClip(video, 5, 9);
    EXPECT_EQ(source->info().first_index, 5);
    const std::vector<Frame> frames = ReadAll(*source);
    ASSERT_EQ(Indices(frames), (std::vector<int>{5, 6, 7, 8, 9}));
    for (const Frame& frame : frames) {
      EXPECT_NEAR(cv::mean(frame.image)[0], Level8(frame.index) + 1.5, 3.0) << frame.index;
    }
    EXPECT_EQ(source->info().last_index, 9);
  }
  EXPECT_EQ(Indices(ReadAll(*OpenClip(video, 17, 1000))), (std::vector<int>{17, 18, 19}));
  EXPECT_EQ(Indices(ReadAll(*OpenClip(video, std::nullopt, 2))), (std::vector<int>{0, 1, 2}));
  EXPECT_EQ(Indices(ReadAll(*OpenClip(video, 19))), std::vector<int>{19});
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(video, 9, 5); }), video.string()));
  EXPECT_TRUE(Contains(InputErrorMessage([&] { OpenClip(video, 25, 30); }),
                       "beyond the end of the video (20 frames)"));
}

// The writer puts the MP4 index after the frame data, so the first 60 % of the bytes hold
// no index: OpenCV does not open the file. Either way the refusal names the file.
TEST(Video, RefusesATruncatedFile) {
  const TempFolder folder;
  const fs::path whole = folder.path() / "whole.mp4";
  const fs::path cut = folder.path() / "cut.mp4";
  WriteNoiseVideo(whole, 30);
  const std::vector<char> bytes = ReadBytes(whole);
  WriteBytes(cut, bytes, bytes.size() * 6 / 10);
  const std::string message = InputErrorMessage([&] {
    const std::unique_ptr<FrameSource> source = OpenClip(cut);
    ReadAll(*source);
  });
  EXPECT_TRUE(Contains(message, cut.string()));
}

// A file whose index survives but whose later frame data are lost (zeroed) opens and
// declares all 30 frames; decoding stops early and Next() says so.
TEST(Video, RefusesAFileWhoseFramesEndBeforeTheDeclaredCount) {
  const TempFolder folder;
  const fs::path whole = folder.path() / "whole.mp4";
  const fs::path damaged = folder.path() / "damaged.mp4";
  WriteNoiseVideo(whole, 30);
  std::vector<char> bytes = ReadBytes(whole);
  const auto [begin, end] = MdatPayload(bytes);
  ASSERT_LT(begin, end) << "no 'mdat' box found";
  std::fill(bytes.begin() + static_cast<std::ptrdiff_t>(begin + (end - begin) / 2),
            bytes.begin() + static_cast<std::ptrdiff_t>(end), 0);
  WriteBytes(damaged, bytes, bytes.size());

  const std::unique_ptr<FrameSource> source = OpenClip(damaged);
  EXPECT_EQ(source->info().frame_count, 30);
  Frame frame;
  int delivered = 0;
  const std::string message = InputErrorMessage([&] {
    while (source->Next(&frame)) ++delivered;
  });
  EXPECT_GT(delivered, 0);
  EXPECT_LT(delivered, 29);
  EXPECT_EQ(message, damaged.string() + ": the video ends after frame " +
                         std::to_string(delivered) +
                         " of the 30 it declares (truncated or damaged file)");
  // A range that ends before the damage reads without complaint.
  EXPECT_EQ(ReadAll(*OpenClip(damaged, 0, delivered - 1)).size(),
            static_cast<std::size_t>(delivered));
}

TEST(Video, RefusesAFileThatIsNotAVideo) {
  const TempFolder folder;
  const fs::path fake = folder.path() / "clip.mp4";
  std::ofstream(fake, std::ios::binary) << "this is not a video file";
  EXPECT_TRUE(Contains(InputErrorMessage([&] { ReadAll(*OpenClip(fake)); }), fake.string()));
}

// ---------------------------------------------------------------- warnings

TEST(ClipWarnings, PlaybackRateInTheFileAgainstTheCaptureRate) {
  ClipInfo info;
  info.kind = "video";
  info.file_fps = 30.0;
  const std::vector<std::string> warnings = ClipWarnings(info, 1000.0);
  ASSERT_EQ(warnings.size(), 1u);
  EXPECT_EQ(warnings[0],
            "the video file states 30 frames/s but the session's capture rate is 1000 "
            "frames/s; times use the capture rate (high-speed cameras usually write a playback "
            "rate into the file) — check capture_fps if this is not the case");

  info.file_fps = 29.97;
  EXPECT_TRUE(Contains(ClipWarnings(info, 2000.0).at(0), "states 29.97 frames/s"));
  info.file_fps = 1000.0;
  EXPECT_TRUE(ClipWarnings(info, 1000.0).empty());
  EXPECT_TRUE(ClipWarnings(info, 1009.0).empty());  // within 1 %
  EXPECT_EQ(ClipWarnings(info, 1011.0).size(), 1u);
  info.file_fps = 0.0;  // no rate in the file (an image folder)
  EXPECT_TRUE(ClipWarnings(info, 1000.0).empty());
}

TEST(ClipWarnings, CaptureRateThatLooksLikeAPlaybackRate) {
  ClipInfo info;
  info.file_fps = 30.0;
  const std::vector<std::string> warnings = ClipWarnings(info, 30.0);
  ASSERT_EQ(warnings.size(), 1u);  // the rates agree; the rate itself is suspicious
  EXPECT_EQ(warnings[0],
            "capture_fps is 30 frames/s, which is a typical playback rate, not a high-speed "
            "capture rate: check the session's capture_fps (a wrong rate scales every speed "
            "and the fitted gravity)");
  info.file_fps = 0.0;
  EXPECT_TRUE(Contains(ClipWarnings(info, 25.0).at(0), "capture_fps is 25 frames/s"));
  EXPECT_TRUE(ClipWarnings(info, 100.0).empty());
}

TEST(ClipWarnings, MissingFramesListedUpToTen) {
  ClipInfo info;
  info.kind = "images";
  info.missing_frames = {12, 13};
  std::vector<std::string> warnings = ClipWarnings(info, 1000.0);
  ASSERT_EQ(warnings.size(), 1u);
  EXPECT_TRUE(Contains(warnings[0], "frames 12, 13 are missing from the image sequence ("));

  info.missing_frames = {7};
  EXPECT_TRUE(
      Contains(ClipWarnings(info, 1000.0).at(0), "frame 7 is missing from the image sequence"));

  info.missing_frames.clear();
  for (int n = 100; n < 115; ++n) info.missing_frames.push_back(n);
  warnings = ClipWarnings(info, 1000.0);
  ASSERT_EQ(warnings.size(), 1u);
  EXPECT_TRUE(Contains(warnings[0],
                       "frames 100, 101, 102, 103, 104, 105, 106, 107, 108, 109 "
                       "and 5 more are missing"));
}

}  // namespace
}  // namespace tumbletrace
