// SHA-256 against the test vectors of FIPS 180-2, appendix B (also NIST's "SHA
// examples"), and a file digest against the same bytes in memory.
#include "tumbletrace/core/sha256.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

TEST(Sha256, MatchesTheFipsTestVectors) {
  // FIPS 180-2 appendix B.1 ("abc"), B.2 (the 448-bit message) and B.3 (a million 'a').
  EXPECT_EQ(Sha256Hex("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  EXPECT_EQ(Sha256Hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  EXPECT_EQ(Sha256Hex(std::string(1000000, 'a')),
            "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
  // The empty message (NIST's published digest of zero bytes).
  EXPECT_EQ(Sha256Hex(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

TEST(Sha256, FileDigestEqualsTheDigestOfItsBytesAcrossReadBlocks) {
  const std::filesystem::path path =
      std::filesystem::temp_directory_path() / "tumbletrace_sha256_test.bin";
  std::string bytes;
  for (int i = 0; i < 200000; ++i) bytes.push_back(static_cast<char>((i * 7919) % 256));
  { std::ofstream(path, std::ios::binary) << bytes; }
  EXPECT_EQ(Sha256HexOfFile(path), Sha256Hex(bytes));
  std::filesystem::remove(path);
}

TEST(Sha256, MissingFileIsBadInputNamingIt) {
  try {
    Sha256HexOfFile("no_such_file_for_sha256.bin");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("no_such_file_for_sha256.bin"), std::string::npos);
  }
}

}  // namespace
}  // namespace tumbletrace
