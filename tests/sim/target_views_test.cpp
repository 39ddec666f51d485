// The camera set-up scenario: reading it strictly, and what `simulate` writes for it (the
// clip of the target read back through the clip reader, the placed image, the truth).
#include "tumbletrace/sim/target_views.hpp"

#include <gtest/gtest.h>

#include <fstream>
#include <nlohmann/json.hpp>
#include <opencv2/imgcodecs.hpp>

#include "support/temp_dir.hpp"
#include "tumbletrace/clip/frame_source.hpp"
#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

class TargetViewsTest : public ::testing::Test {
 protected:
  TargetViewsTest() : dir_("target_views") {
    Put("camera.yaml",
        "image_size: [640, 480]\nfx: 900\nfy: 900\ncx: 320\ncy: 240\n"
        "distortion: [-0.05, 0, 0, 0, 0]\nworld_to_camera:\n  rotation: [[1, 0, 0], [0, 0, -1], "
        "[0, 1, 0]]\n  translation_m: [0, 0, 2.0]\n");
    Put("target.yaml", "kind: checkerboard\nunits: mm\ninner_corners: [9, 6]\nsquare: 20\n");
    Put("big.yaml", "kind: charuco\nunits: mm\nsquares: [5, 4]\nsquare: 80\nmarker: 60\n"
                    "dictionary: DICT_5X5_100\n");
  }
  fs::path Put(const std::string& name, const std::string& text) const {
    std::ofstream(dir_.path() / name) << text;
    return dir_.path() / name;
  }
  const fs::path& folder() const { return dir_.path(); }

 private:
  testing::TempDir dir_;
};

constexpr const char* kScenario =
    "kind: target-views\ncamera: camera.yaml\ntarget: target.yaml\nviews: 4\nhold_frames: 2\n"
    "supersampling: 1\nnoise: {image_sigma_levels: 1.0, seed: 3}\n"
    "placed:\n  target: big.yaml\n  world_from_target: {rotation: [[1, 0, 0], [0, 0, 1], "
    "[0, -1, 0]], translation_m: [-0.1, 0, 0.1]}\n";

TEST_F(TargetViewsTest, WritesTheClipThePlacedImageAndTheTruth) {
  const fs::path file = Put("setup.yaml", kScenario);
  ASSERT_TRUE(IsTargetViewsScenario(file));
  const TargetViewsScenario s = ReadTargetViewsScenario(file);
  EXPECT_EQ(s.views, 4);
  EXPECT_EQ(s.hold_frames, 2);
  ASSERT_TRUE(s.placed.has_value());
  const TargetViewsOutput out = SimulateTargetViews(s, folder() / "out", {});
  EXPECT_EQ(out.frames, 8);
  EXPECT_TRUE(out.placed);
  std::unique_ptr<FrameSource> clip = OpenClip(folder() / "out/target_views.mp4");
  Frame frame;
  int frames = 0;
  while (clip->Next(&frame)) {
    EXPECT_EQ(frame.image.cols, 640);
    ++frames;
  }
  EXPECT_EQ(frames, 8);
  EXPECT_EQ(cv::imread((folder() / "out/placed.png").string()).cols, 640);
  std::ifstream in(folder() / "out/truth.json");
  const nlohmann::json truth = nlohmann::json::parse(in);
  EXPECT_EQ(truth["camera"]["fx"].get<double>(), 900.0);
  EXPECT_EQ(truth["camera"]["world_to_camera"]["translation_m"][2].get<double>(), 2.0);
  EXPECT_EQ(truth["frames"].get<int>(), 8);
}

TEST_F(TargetViewsTest, AThrowScenarioIsNotOne) {
  EXPECT_FALSE(IsTargetViewsScenario(Put("throw.yaml", "body: body.yaml\ncamera: camera.yaml\n")));
}

TEST_F(TargetViewsTest, UnknownKeysAndBadValuesAreRefusedByName) {
  const auto refused = [&](const std::string& text, const std::string& word) {
    try {
      ReadTargetViewsScenario(Put("bad.yaml", text));
      ADD_FAILURE() << "expected InputError for " << word;
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find(word), std::string::npos) << e.what();
    }
  };
  refused(std::string(kScenario) + "colour: red\n", "colour");
  refused("kind: target-views\ncamera: camera.yaml\ntarget: target.yaml\nviews: 2\n", "views");
  refused("kind: target-views\ncamera: camera.yaml\ntarget: target.yaml\ntilt_deg: [50, 20]\n",
          "tilt_deg");
  refused("kind: target-views\ncamera: camera.yaml\ntarget: target.yaml\nplaced:\n  target: "
          "big.yaml\n  world_from_target: {rotation: [[1, 0, 0], [0, 1, 0], [0, 1, 0]], "
          "translation_m: [0, 0, 0]}\n",
          "rotation");
  Put("posefree.yaml", "image_size: [640, 480]\nfx: 900\nfy: 900\ncx: 320\ncy: 240\n"
                       "distortion: [0, 0, 0, 0, 0]\n");
  refused("kind: target-views\ncamera: posefree.yaml\ntarget: target.yaml\nplaced:\n  target: "
          "big.yaml\n  world_from_target: {rotation: [[1, 0, 0], [0, 0, 1], [0, -1, 0]], "
          "translation_m: [0, 0, 0]}\n",
          "world_to_camera");
}

}  // namespace
}  // namespace tumbletrace
