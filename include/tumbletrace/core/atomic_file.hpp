// Outputs are written to a temporary name beside the target and renamed when complete, so
// that a failed run never leaves a half-written file (docs/files.md).
#pragma once

#include <filesystem>
#include <functional>
#include <ostream>
#include <string>

namespace tumbletrace {

// Calls `write` on a stream to `<path>.partial`, then renames it to `path`. On any
// exception the partial file is removed and the exception rethrown.
void WriteFileAtomically(const std::filesystem::path& path,
                         const std::function<void(std::ostream&)>& write);

// For files written by other libraries to a path (videos): the writer gets the temporary
// path, which is renamed to `path` when `write` returns. The temporary keeps the extension.
void WritePathAtomically(const std::filesystem::path& path,
                         const std::function<void(const std::filesystem::path&)>& write);

}  // namespace tumbletrace
