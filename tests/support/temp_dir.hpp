// A fresh folder in the system's temporary folder, named after the test and the process,
// removed with everything in it when the object goes.
#pragma once

#include <unistd.h>

#include <filesystem>
#include <string>

namespace tumbletrace::testing {

class TempDir {
 public:
  explicit TempDir(const std::string& name)
      : path_(std::filesystem::temp_directory_path() /
              ("tumbletrace_" + name + "_" + std::to_string(::getpid()))) {
    std::filesystem::remove_all(path_);
    std::filesystem::create_directories(path_);
  }
  ~TempDir() { std::filesystem::remove_all(path_); }
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  const std::filesystem::path& path() const { return path_; }

 private:
  std::filesystem::path path_;
};

}  // namespace tumbletrace::testing
