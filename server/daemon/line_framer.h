// LineFramer: splits a byte stream into request lines, never buffering more
// than `max_line_bytes` of one line. A line over 256 KiB reserves
// `max_line_bytes` of address space at once, so no read copies a long line
// to grow it; a line over the limit frees its buffer.
//
// feed() takes bytes and returns events in order: a complete line (without
// its "\n" and any "\r"), or `too_long` once for a line that exceeded the
// limit (its remaining bytes, up to the next "\n", are skipped).
//
// Thread contract: one per connection.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace godwit {

class LineFramer {
 public:
  struct Event {
    enum Kind { line, too_long } kind;
    std::string text;
  };
  explicit LineFramer(size_t max_line_bytes) : max_(max_line_bytes) {}
  std::vector<Event> feed(std::string_view bytes);
  // Bytes of an unfinished line held now.
  size_t pending() const { return buf_.size(); }
  // In a line over the limit, whose bytes are skipped up to its "\n".
  bool skipping() const { return skipping_; }

 private:
  static constexpr size_t kReserveAllFromBytes = 256u << 10;
  size_t max_;
  std::string buf_;
  bool skipping_ = false;
};

}  // namespace godwit
