// Speed and memory of the front end on one clip (the session's first camera's), measured in
// one process:
//   decode-only: every frame read through the clip reader;
//   track: the same frames read, markers detected near the tracker's predictions, tracked.
// Prints both times, their ratio, and the process's peak resident memory. Usage:
//   track_bench SESSION.yaml [decode|track|both]
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <string>

#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/detect/marker_detector.hpp"
#include "tumbletrace/model/session.hpp"
#include "tumbletrace/track/tracker.hpp"

namespace {

using Clock = std::chrono::steady_clock;

double DecodeOnly(const tumbletrace::Session& session, int* frames) {
  const auto start = Clock::now();
  auto source = tumbletrace::OpenClip(session.cameras.front().clip);
  tumbletrace::Frame frame;
  *frames = 0;
  while (source->Next(&frame)) ++*frames;
  return std::chrono::duration<double>(Clock::now() - start).count();
}

double DecodeDetectTrack(const tumbletrace::Session& session, int* tracks) {
  const auto start = Clock::now();
  auto source = tumbletrace::OpenClip(session.cameras.front().clip);
  tumbletrace::MarkerDetector detector(tumbletrace::DetectorOptions{});
  tumbletrace::Tracker tracker(tumbletrace::TrackerOptions{});
  tumbletrace::Frame frame;
  while (source->Next(&frame)) {
    const auto regions = tracker.SearchRegions(frame.index, frame.image.size());
    const double time_s = frame.index / session.cameras.front().capture_fps;
    tracker.Add(frame.index, time_s, detector.Detect(frame.image, regions));
  }
  const auto points = tracker.Finish();
  *tracks = points.empty() ? 0 : points.back().track;
  return std::chrono::duration<double>(Clock::now() - start).count();
}

double PeakMemoryMiB() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return usage.ru_maxrss / 1024.0;  // ru_maxrss is in KiB on Linux
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: track_bench SESSION.yaml [decode|track|both]\n");
    return 2;
  }
  const tumbletrace::Session session = tumbletrace::ReadSessionYaml(argv[1]);
  const std::string mode = argc > 2 ? argv[2] : "both";
  int frames = 0, tracks = 0;
  if (mode == "decode" || mode == "both") {
    const double decode_s = DecodeOnly(session, &frames);
    std::printf("decode-only: %d frames in %.3f s (%.2f ms/frame)\n", frames, decode_s,
                1e3 * decode_s / frames);
    if (mode == "both") {
      const double track_s = DecodeDetectTrack(session, &tracks);
      std::printf("decode+detect+track: %.3f s (%.2f ms/frame), %d tracks\n", track_s,
                  1e3 * track_s / frames, tracks);
      std::printf("ratio (decode+detect+track) / (decode only): %.3f\n", track_s / decode_s);
    }
  } else {
    const double track_s = DecodeDetectTrack(session, &tracks);
    std::printf("decode+detect+track: %.3f s, %d tracks\n", track_s, tracks);
  }
  std::printf("peak resident memory: %.1f MiB\n", PeakMemoryMiB());
  return 0;
}
