#include "levelhead/core/checksums.hpp"

#include <fmt/format.h>
#include <openssl/evp.h>

#include <fstream>
#include <memory>
#include <vector>

#include "levelhead/core/input_files.hpp"

namespace levelhead {

namespace {
using DigestContext = std::unique_ptr<EVP_MD_CTX, decltype(&EVP_MD_CTX_free)>;

DigestContext new_sha256() {
  DigestContext md(EVP_MD_CTX_new(), EVP_MD_CTX_free);
  EVP_DigestInit_ex(md.get(), EVP_sha256(), nullptr);
  return md;
}

std::string digest_hex(EVP_MD_CTX* md) {
  unsigned char digest[EVP_MAX_MD_SIZE];
  unsigned int length = 0;
  EVP_DigestFinal_ex(md, digest, &length);
  std::string hex;
  for (unsigned int i = 0; i < length; ++i) hex += fmt::format("{:02x}", digest[i]);
  return hex;
}
}  // namespace

std::string file_sha256(const std::filesystem::path& path) {
  note_input_file(path);
  std::ifstream in(path, std::ios::binary);
  if (!in) return "";
  const DigestContext md = new_sha256();
  std::vector<char> buffer(1 << 16);
  while (in) {
    in.read(buffer.data(), static_cast<std::streamsize>(buffer.size()));
    EVP_DigestUpdate(md.get(), buffer.data(), static_cast<std::size_t>(in.gcount()));
  }
  return digest_hex(md.get());
}

std::string text_sha256(const std::string& text) {
  const DigestContext md = new_sha256();
  EVP_DigestUpdate(md.get(), text.data(), text.size());
  return digest_hex(md.get());
}

}  // namespace levelhead
