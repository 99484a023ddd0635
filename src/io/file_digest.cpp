#include "io/detail/file_digest.hpp"

#include <openssl/evp.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <memory>
#include <vector>

#include "cylzone/core/errors.hpp"

namespace cylzone::detail {
namespace {

using DigestContext = std::unique_ptr<EVP_MD_CTX, void (*)(EVP_MD_CTX*)>;

DigestContext start_sha256(const std::string& source) {
  DigestContext ctx(EVP_MD_CTX_new(), &EVP_MD_CTX_free);
  if (!ctx || EVP_DigestInit_ex(ctx.get(), EVP_sha256(), nullptr) != 1)
    throw InputError(source, 0, "cannot initialise SHA-256");
  return ctx;
}

std::string finish_hex(EVP_MD_CTX* ctx) {
  unsigned char digest[EVP_MAX_MD_SIZE];
  unsigned int length = 0;
  EVP_DigestFinal_ex(ctx, digest, &length);
  static const char* hex = "0123456789abcdef";
  std::string text;
  text.reserve(2 * length);
  for (unsigned int i = 0; i < length; ++i) {
    text.push_back(hex[digest[i] >> 4]);
    text.push_back(hex[digest[i] & 15]);
  }
  return text;
}

}  // namespace

std::string sha256_of_bytes(std::string_view bytes) {
  DigestContext ctx = start_sha256("SHA-256");
  EVP_DigestUpdate(ctx.get(), bytes.data(), bytes.size());
  return finish_hex(ctx.get());
}

std::string sha256_of_file(const std::filesystem::path& file) {
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> in(std::fopen(file.c_str(), "rb"), &std::fclose);
  if (!in) throw InputError(file.string(), 0, std::string("cannot open: ") + std::strerror(errno));
  DigestContext ctx = start_sha256(file.string());
  std::vector<unsigned char> buffer(1 << 16);
  std::size_t n = 0;
  while ((n = std::fread(buffer.data(), 1, buffer.size(), in.get())) > 0)
    EVP_DigestUpdate(ctx.get(), buffer.data(), n);
  if (std::ferror(in.get())) throw InputError(file.string(), 0, "read error while hashing");
  return finish_hex(ctx.get());
}

}  // namespace cylzone::detail
