#include "line_framer.h"

#include <algorithm>

namespace godwit {

std::vector<LineFramer::Event> LineFramer::feed(std::string_view bytes) {
  std::vector<Event> out;
  // One allocation for the events, however many lines the bytes hold (a
  // read of pipelined requests, or of nothing but newlines).
  out.reserve(static_cast<size_t>(std::count(bytes.begin(), bytes.end(), '\n')) + 1);
  size_t pos = 0;
  while (pos < bytes.size()) {
    const size_t nl = bytes.find('\n', pos);
    const size_t end = nl == std::string_view::npos ? bytes.size() : nl;
    if (!skipping_) {
      buf_.append(bytes.substr(pos, end - pos));
      if (buf_.size() > max_) {
        buf_.clear();
        skipping_ = true;
        out.push_back({Event::too_long, {}});
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
