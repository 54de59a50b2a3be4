#include "json_text.h"

#include <cstdio>

namespace godwit {
namespace {

// Length of the well-formed UTF-8 sequence at s[i] (RFC 3629: no overlong
// forms, surrogates or values over U+10FFFF), or 0 when there is none.
size_t sequence_length(std::string_view s, size_t i) {
  const auto c = static_cast<unsigned char>(s[i]);
  if (c < 0x80) return 1;
  size_t len;
  unsigned lo = 0x80, hi = 0xBF;  // range of the second byte
  if (c >= 0xC2 && c <= 0xDF) len = 2;
  else if (c == 0xE0) len = 3, lo = 0xA0;
  else if (c == 0xED) len = 3, hi = 0x9F;
  else if (c >= 0xE1 && c <= 0xEF) len = 3;
  else if (c == 0xF0) len = 4, lo = 0x90;
  else if (c == 0xF4) len = 4, hi = 0x8F;
  else if (c >= 0xF1 && c <= 0xF3) len = 4;
  else return 0;
  if (i + len > s.size()) return 0;
  for (size_t k = 1; k < len; ++k) {
    const auto b = static_cast<unsigned char>(s[i + k]);
    if (b < (k == 1 ? lo : 0x80) || b > (k == 1 ? hi : 0xBF)) return 0;
  }
  return len;
}

}  // namespace

bool is_valid_utf8(std::string_view s) {
  for (size_t i = 0; i < s.size();) {
    const size_t n = sequence_length(s, i);
    if (n == 0) return false;
    i += n;
  }
  return true;
}

std::string escape_invalid_utf8(std::string_view s) {
  std::string out;
  for (size_t i = 0; i < s.size();) {
    const size_t n = sequence_length(s, i);
    if (n > 0) {
      out.append(s.substr(i, n));
      i += n;
      continue;
    }
    char hex[4];
    std::snprintf(hex, sizeof hex, "%%%02X", static_cast<unsigned char>(s[i]));
    out += hex;
    ++i;
  }
  return out;
}

}  // namespace godwit
