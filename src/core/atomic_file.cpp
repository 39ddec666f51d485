#include "tumbletrace/core/atomic_file.hpp"

#include <fmt/format.h>

#include <fstream>
#include <stdexcept>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

// Removes a temporary left by a failed write; never throws (it runs while unwinding).
void RemoveQuietly(const fs::path& path) {
  std::error_code error;
  fs::remove_all(path, error);
}

void Rename(const fs::path& from, const fs::path& to) {
  std::error_code error;
  fs::rename(from, to, error);
  if (error) {
    throw InputError(fmt::format("{}: cannot be written (renaming '{}' failed: {})", to.string(),
                                 from.string(), error.message()));
  }
}

}  // namespace

void WriteFileAtomically(const fs::path& path, const std::function<void(std::ostream&)>& write) {
  fs::path partial = path;
  partial += ".partial";
  try {
    {
      std::ofstream out(partial, std::ios::binary | std::ios::trunc);
      if (!out) throw InputError(fmt::format("{}: cannot be opened for writing", partial.string()));
      write(out);
      out.flush();
      if (!out) throw InputError(fmt::format("{}: writing failed", partial.string()));
    }
    Rename(partial, path);
  } catch (...) {
    RemoveQuietly(partial);
    throw;
  }
}

void WritePathAtomically(const fs::path& path, const std::function<void(const fs::path&)>& write) {
  // clip.mp4 -> clip.partial.mp4: writers that choose a format by extension still see it.
  const fs::path partial =
      path.parent_path() / (path.stem().string() + ".partial" + path.extension().string());
  try {
    write(partial);
    if (!fs::exists(partial)) {
      throw std::runtime_error(fmt::format("{}: the writer produced no output", partial.string()));
    }
    Rename(partial, path);
  } catch (...) {
    RemoveQuietly(partial);
    throw;
  }
}

}  // namespace tumbletrace
