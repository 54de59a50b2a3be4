#include "line_framer.h"

namespace godwit {

std::vector<LineFramer::Event> LineFramer::feed(std::string_view bytes) {
  std::vector<Event> out;
  size_t pos = 0;
  while (pos < bytes.size()) {
    const size_t nl = bytes.find('\n', pos);
    const size_t end = nl == std::string_view::npos ? bytes.size() : nl;
    if (!skipping_) {
      const std::string_view piece = bytes.substr(pos, end - pos);
      if (buf_.size() + piece.size() > max_) {
        std::string().swap(buf_);  // a hostile line's memory goes back at once
        skipping_ = true;
        out.push_back({Event::too_long, {}});
      } else {
        // A long line gets room for the longest at once (address space;
        // pages are touched as bytes arrive): growing by doubling copied up
        // to 16 MiB within one read, stalling every connection of the I/O
        // thread for tens of milliseconds.
        if (buf_.size() + piece.size() > kReserveAllFromBytes && buf_.capacity() < max_) buf_.reserve(max_);
        buf_.append(piece);
      }
    }
    if (nl == std::string_view::npos) break;
    if (!skipping_) {
      if (!buf_.empty() && buf_.back() == '\r') buf_.pop_back();
      out.push_back({Event::line, std::move(buf_)});
    }
    buf_.clear();
    skipping_ = false;
    pos = nl + 1;
  }
  return out;
}

}  // namespace godwit
