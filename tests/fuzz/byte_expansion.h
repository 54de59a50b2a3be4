// Byte expansion: how a small fuzz input stands for a huge request.
//
// libFuzzer mutates inputs of a few kilobytes well and inputs of 32 MiB
// badly, yet the daemon must survive lines of 32 MiB and nesting 100 000
// deep in any field. So an input may hold repeat marks: the byte 0xFF, a
// count byte k and a length byte n are followed by a unit of 1 + n bytes
// (up to 256: room for a path in a list), written k + 1 times when k is
// under 230, else 2^(k - 230) times (one to 32 Mi times). Huge expansions
// cost a second or more each under the sanitizers, so most random count
// bytes ask for a few copies and one in ten for an exponential number.
// Every other byte,
// and a mark cut short by the end of the input, is copied as it is; a lone
// 0xFF (invalid UTF-8, worth keeping) is therefore still reachable. The
// expansion stops at `max_bytes`.
//
//   "[" x 100000:  FF F6 00 '['  (2^16 = 65536) FF F5 00 '[' ...
//   32 MiB of "a": FF FF 00 'a'  (2^25)
//
// Thread contract: a plain function.
#pragma once

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <string>

namespace godwit::fuzz {

inline constexpr unsigned char kRepeatMark = 0xFF;
inline constexpr unsigned kExponentialFrom = 230;

inline std::string expand_bytes(const uint8_t* data, size_t size, size_t max_bytes) {
  std::string out;
  size_t i = 0;
  while (i < size && out.size() < max_bytes) {
    if (data[i] == kRepeatMark && i + 2 < size) {
      const unsigned k = data[i + 1];
      const size_t times = k < kExponentialFrom ? k + 1 : size_t{1} << (k - kExponentialFrom);
      const size_t unit = 1 + size_t{data[i + 2]};
      if (i + 3 + unit <= size) {
        // The unit once, then the copy doubled: a few appends, not millions.
        const size_t total = std::min(times * unit, max_bytes - out.size());
        const size_t start = out.size();
        out.reserve(start + total);
        out.append(reinterpret_cast<const char*>(data + i + 3), std::min(unit, total));
        while (out.size() - start < total)
          out.append(out, start, std::min(out.size() - start, total - (out.size() - start)));
        i += 3 + unit;
        continue;
      }
    }
    out.push_back(static_cast<char>(data[i]));
    ++i;
  }
  if (out.size() > max_bytes) out.resize(max_bytes);
  return out;
}

}  // namespace godwit::fuzz
