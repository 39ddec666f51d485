#include "tumbletrace/core/atomic_file.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

// A fresh folder per test, removed afterwards.
class AtomicFileTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    folder_ = fs::temp_directory_path() /
              ("tumbletrace_atomic_" + std::string(info->name()) + "_" + std::to_string(getpid()));
    fs::remove_all(folder_);
    fs::create_directories(folder_);
  }
  void TearDown() override { fs::remove_all(folder_); }

  static std::string Contents(const fs::path& path) {
    std::ifstream in(path);
    std::ostringstream text;
    text << in.rdbuf();
    return text.str();
  }
  // Names of the files in the folder.
  std::vector<std::string> Listing() const {
    std::vector<std::string> names;
    for (const auto& entry : fs::directory_iterator(folder_)) {
      names.push_back(entry.path().filename().string());
    }
    std::sort(names.begin(), names.end());
    return names;
  }

  fs::path folder_;
};

TEST_F(AtomicFileTest, WritesTheFile) {
  const fs::path path = folder_ / "results.json";
  WriteFileAtomically(path, [](std::ostream& out) { out << "{}\n"; });
  EXPECT_EQ(Contents(path), "{}\n");
  EXPECT_EQ(Listing(), std::vector<std::string>{"results.json"});
}

TEST_F(AtomicFileTest, PartialFileHasTheExpectedNameWhileWriting) {
  const fs::path path = folder_ / "results.json";
  WriteFileAtomically(path, [&](std::ostream& out) {
    out << "x";
    EXPECT_TRUE(fs::exists(folder_ / "results.json.partial"));
    EXPECT_FALSE(fs::exists(path));
  });
  EXPECT_TRUE(fs::exists(path));
}

TEST_F(AtomicFileTest, FailureLeavesNoFile) {
  const fs::path path = folder_ / "results.json";
  EXPECT_THROW(WriteFileAtomically(path,
                                   [](std::ostream& out) {
                                     out << "half";
                                     throw std::runtime_error("stopped");
                                   }),
               std::runtime_error);
  EXPECT_TRUE(Listing().empty());
}

TEST_F(AtomicFileTest, FailureKeepsTheOldFile) {
  const fs::path path = folder_ / "tracks.csv";
  WriteFileAtomically(path, [](std::ostream& out) { out << "old"; });
  EXPECT_THROW(WriteFileAtomically(path,
                                   [](std::ostream& out) {
                                     out << "new";
                                     throw std::runtime_error("stopped");
                                   }),
               std::runtime_error);
  EXPECT_EQ(Contents(path), "old");
  EXPECT_EQ(Listing(), std::vector<std::string>{"tracks.csv"});
}

TEST_F(AtomicFileTest, UnwritableFolderIsAnError) {
  EXPECT_ANY_THROW(
      WriteFileAtomically(folder_ / "no_such_folder" / "x.txt", [](std::ostream& out) {}));
  EXPECT_TRUE(Listing().empty());
}

TEST_F(AtomicFileTest, PathWriterKeepsTheExtension) {
  const fs::path path = folder_ / "clip.mp4";
  fs::path seen;
  WritePathAtomically(path, [&](const fs::path& partial) {
    seen = partial;
    std::ofstream(partial) << "video";
  });
  EXPECT_EQ(seen, folder_ / "clip.partial.mp4");
  EXPECT_EQ(Contents(path), "video");
  EXPECT_EQ(Listing(), std::vector<std::string>{"clip.mp4"});
}

TEST_F(AtomicFileTest, PathWriterFailureLeavesNoFile) {
  const fs::path path = folder_ / "clip.mp4";
  EXPECT_THROW(WritePathAtomically(path,
                                   [](const fs::path& partial) {
                                     std::ofstream(partial) << "half a video";
                                     throw std::runtime_error("encoder failed");
                                   }),
               std::runtime_error);
  EXPECT_TRUE(Listing().empty());
}

TEST_F(AtomicFileTest, PathWriterThatWritesNothingIsAnError) {
  EXPECT_ANY_THROW(WritePathAtomically(folder_ / "clip.mp4", [](const fs::path&) {}));
  EXPECT_TRUE(Listing().empty());
}

}  // namespace
}  // namespace tumbletrace
