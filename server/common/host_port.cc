#include "host_port.h"

#include <exception>

namespace godwit {

bool split_host_port(const std::string& s, std::string& host, unsigned short& port) {
  std::string p;
  if (!s.empty() && s[0] == '[') {
    const auto close = s.find(']');
    if (close == std::string::npos || close + 1 >= s.size() || s[close + 1] != ':') return false;
    host = s.substr(1, close - 1);
    p = s.substr(close + 2);
  } else {
    const auto colon = s.rfind(':');
    if (colon == std::string::npos) return false;
    host = s.substr(0, colon);
    p = s.substr(colon + 1);
  }
  try {
    const long v = std::stol(p);
    if (v < 0 || v > 65535) return false;
    port = static_cast<unsigned short>(v);
  } catch (const std::exception&) {
    return false;
  }
  return !host.empty();
}

}  // namespace godwit
