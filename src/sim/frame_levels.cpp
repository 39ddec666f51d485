// Background ramp, sensor noise and quantisation of synthetic frames (frame_levels.hpp).
#include "frame_levels.hpp"

#include <array>
#include <cmath>
#include <cstddef>
#include <numbers>
#include <random>

namespace tumbletrace {
namespace {

// Standard normal deviates, five from each 64-bit output of the engine: a 12-bit chunk picks
// one of 4096 equally probable bins of N(0, 1) and the deviate is the mean of the normal
// distribution inside that bin; the two outermost bins (|z| > 3.487) draw from the exact tail
// (G. Marsaglia, "Generating a variable from the tail of the normal distribution",
// Technometrics 6, 1964). What this gives up is the spread inside the inner bins, 3.4e-6 of
// the variance. Reason: std::normal_distribution costs about 30 ns a deviate here, 25 ms for
// a 1024 x 768 frame; this needs one engine output per five pixels and a table in L1 cache.
class NormalDeviates {
 public:
  explicit NormalDeviates(std::uint64_t seed) : engine_(seed), table_(Table::Get()) {}

  // Deviates in the order of the chunks: low bits of each engine output first.
  void Fill(float* out, int count) {
    int i = 0;
    for (; i < count && chunks_left_ > 0; ++i) out[i] = FromChunk(NextChunk());
    for (; count - i >= kChunksPerDraw; i += kChunksPerDraw) {
      std::uint64_t bits = engine_();
      for (int k = 0; k < kChunksPerDraw; ++k) {
        out[i + k] = FromChunk(bits & (kBins - 1));
        bits >>= kBits;
      }
    }
    for (; i < count; ++i) out[i] = FromChunk(NextChunk());
  }

 private:
  static constexpr int kBits = 12;
  static constexpr int kChunksPerDraw = 64 / kBits;
  static constexpr std::size_t kBins = std::size_t{1} << kBits;

  struct Table {
    std::array<float, kBins> bin_means{};
    double tail_start = 0.0;  // lower edge of the upper tail bin

    static double UpperTail(double z) { return 0.5 * std::erfc(z / std::numbers::sqrt2); }
    static double Density(double z) {
      return std::exp(-0.5 * z * z) / std::sqrt(2.0 * std::numbers::pi);
    }

    // Bin edges z_i with P(Z > z_i) = 1 - i / kBins, found by Newton steps marching up from
    // z = 0 (each edge starts from the previous one); the lower half by symmetry. The mean of
    // N(0, 1) in [z_i, z_i+1] is (phi(z_i) - phi(z_i+1)) * kBins.
    static const Table& Get() {
      static const Table table = [] {
        Table t;
        std::array<double, kBins> edges{};  // edges[i] = z_i for i >= kBins / 2
        double z = 0.0;
        for (std::size_t i = kBins / 2 + 1; i < kBins; ++i) {
          const double upper_tail = static_cast<double>(kBins - i) / static_cast<double>(kBins);
          for (int iteration = 0; iteration < 50; ++iteration) {
            const double step = (UpperTail(z) - upper_tail) / Density(z);
            z += step;
            if (std::abs(step) < 1e-14 * std::max(1.0, std::abs(z))) break;
          }
          edges[i] = z;
        }
        for (std::size_t i = kBins / 2; i + 1 < kBins; ++i) {
          const double mean =
              (Density(edges[i]) - Density(edges[i + 1])) * static_cast<double>(kBins);
          t.bin_means[i] = static_cast<float>(mean);
          t.bin_means[kBins - 1 - i] = static_cast<float>(-mean);
        }
        t.tail_start = edges[kBins - 1];
        return t;
      }();
      return table;
    }
  };

  std::size_t NextChunk() {
    if (chunks_left_ == 0) {
      bits_ = engine_();
      chunks_left_ = kChunksPerDraw;
    }
    const std::size_t chunk = bits_ & (kBins - 1);
    bits_ >>= kBits;
    --chunks_left_;
    return chunk;
  }
  float FromChunk(std::size_t bin) {
    if (bin == 0 || bin == kBins - 1) [[unlikely]] {
      return static_cast<float>(bin == 0 ? -Tail() : Tail());
    }
    return table_.bin_means[bin];
  }
  double Uniform() {  // in (0, 1)
    return (static_cast<double>(engine_() >> 11) + 0.5) * 0x1p-53;
  }
  double Tail() {
    const double a = table_.tail_start;
    for (;;) {
      const double x = -std::log(Uniform()) / a;
      const double y = -std::log(Uniform());
      if (2.0 * y > x * x) return a + x;
    }
  }

  std::mt19937_64 engine_;
  const Table& table_;
  std::uint64_t bits_ = 0;
  int chunks_left_ = 0;
};

}  // namespace

std::vector<float> BackgroundRamp(int width_px, double level, double gradient) {
  std::vector<float> background(width_px);
  for (int x = 0; x < width_px; ++x) {
    const double ramp = width_px > 1 ? static_cast<double>(x) / (width_px - 1) : 0.0;
    background[x] = static_cast<float>(level + gradient * ramp);
  }
  return background;
}

cv::Mat AddNoiseAndQuantise(double sigma_levels, std::uint64_t seed, cv::Mat* levels) {
  // Noise in row-major pixel order, then rounding (half to even) and saturation to 0..255.
  const float sigma = static_cast<float>(sigma_levels);
  if (sigma > 0.0f) {
    NormalDeviates noise(seed);
    std::vector<float> deviates(levels->cols);
    for (int y = 0; y < levels->rows; ++y) {
      noise.Fill(deviates.data(), levels->cols);
      float* level = levels->ptr<float>(y);
      for (int x = 0; x < levels->cols; ++x) level[x] += sigma * deviates[x];
    }
  }
  cv::Mat frame;
  levels->convertTo(frame, CV_8U);
  return frame;
}

}  // namespace tumbletrace
