#include "tumbletrace/core/sha256.hpp"

#include <fmt/format.h>
#include <openssl/evp.h>

#include <array>
#include <fstream>
#include <memory>
#include <stdexcept>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

// One EVP digest context, freed on every path out.
class Sha256Context {
 public:
  Sha256Context() : context_(EVP_MD_CTX_new(), &EVP_MD_CTX_free) {
    if (!context_ || EVP_DigestInit_ex(context_.get(), EVP_sha256(), nullptr) != 1) {
      throw std::runtime_error("OpenSSL could not start a SHA-256 digest");
    }
  }
  void Update(const char* data, size_t size) {
    if (EVP_DigestUpdate(context_.get(), data, size) != 1) {
      throw std::runtime_error("OpenSSL SHA-256 update failed");
    }
  }
  std::string FinalHex() {
    std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
    unsigned int size = 0;
    if (EVP_DigestFinal_ex(context_.get(), digest.data(), &size) != 1) {
      throw std::runtime_error("OpenSSL SHA-256 final step failed");
    }
    std::string hex;
    for (unsigned int i = 0; i < size; ++i) hex += fmt::format("{:02x}", digest[i]);
    return hex;
  }

 private:
  std::unique_ptr<EVP_MD_CTX, decltype(&EVP_MD_CTX_free)> context_;
};

}  // namespace

std::string Sha256Hex(std::string_view data) {
  Sha256Context context;
  context.Update(data.data(), data.size());
  return context.FinalHex();
}

std::string Sha256HexOfFile(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(fmt::format("{}: cannot be read for its SHA-256 digest", path.string()));
  Sha256Context context;
  std::array<char, 1 << 16> block{};
  while (in) {
    in.read(block.data(), block.size());
    if (in.gcount() > 0) context.Update(block.data(), static_cast<size_t>(in.gcount()));
  }
  if (in.bad()) throw InputError(fmt::format("{}: read error while computing its SHA-256", path.string()));
  return context.FinalHex();
}

}  // namespace tumbletrace
