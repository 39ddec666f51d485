// SHA-256 digests of input files, for the provenance in results.json and the report.
#pragma once

#include <filesystem>
#include <string>
#include <string_view>

namespace tumbletrace {

// The SHA-256 digest (FIPS 180-4) of `data` as 64 lower-case hex digits, by OpenSSL's
// libcrypto (EVP interface).
std::string Sha256Hex(std::string_view data);

// The digest of a file's bytes, read in blocks. Throws InputError naming the file when it
// cannot be read.
std::string Sha256HexOfFile(const std::filesystem::path& path);

}  // namespace tumbletrace
