#include "file_digest.h"

#include <openssl/evp.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <memory>
#include <vector>

namespace godwit {
namespace {

std::string hex(const unsigned char* d, unsigned n) {
  static const char* digits = "0123456789abcdef";
  std::string s;
  s.reserve(2 * n);
  for (unsigned i = 0; i < n; ++i) {
    s += digits[d[i] >> 4];
    s += digits[d[i] & 15];
  }
  return s;
}

struct MdFree {
  void operator()(EVP_MD_CTX* c) const { EVP_MD_CTX_free(c); }
};
struct FileClose {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

}  // namespace

Result<std::string> file_sha256(const std::string& path) {
  std::unique_ptr<std::FILE, FileClose> f(std::fopen(path.c_str(), "rb"));
  if (!f) {
    const int e = errno;
    return Error{e == ENOENT ? ErrorCode::not_found : ErrorCode::unreadable, std::string("cannot read: ") + std::strerror(e),
                 path, std::nullopt};
  }
  std::unique_ptr<EVP_MD_CTX, MdFree> ctx(EVP_MD_CTX_new());
  if (!ctx || EVP_DigestInit_ex(ctx.get(), EVP_sha256(), nullptr) != 1)
    return Error{ErrorCode::internal, "SHA-256 unavailable in libcrypto", path, std::nullopt};
  std::vector<unsigned char> buf(1 << 20);
  for (;;) {
    const size_t n = std::fread(buf.data(), 1, buf.size(), f.get());
    if (n > 0) EVP_DigestUpdate(ctx.get(), buf.data(), n);
    if (n < buf.size()) {
      if (std::ferror(f.get())) return Error{ErrorCode::io, "read error while hashing", path, std::nullopt};
      break;
    }
  }
  unsigned char md[EVP_MAX_MD_SIZE];
  unsigned len = 0;
  EVP_DigestFinal_ex(ctx.get(), md, &len);
  return hex(md, len);
}

std::string sha256_hex(std::string_view bytes) {
  unsigned char md[EVP_MAX_MD_SIZE];
  unsigned len = 0;
  EVP_Digest(bytes.data(), bytes.size(), md, &len, EVP_sha256(), nullptr);
  return hex(md, len);
}

}  // namespace godwit
