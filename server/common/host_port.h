// A TCP address as godwitd's `listen` setting and the client's `--connect`
// write it. Shared by both programs, so the command line needs none of the
// daemon's libraries to parse it.
#pragma once

#include <string>

namespace godwit {

// "HOST:PORT" or "[V6]:PORT" into its parts. False (and `host`, `port`
// unspecified) for anything else: no colon, an empty host, a port outside
// 0-65535 or not a number.
bool split_host_port(const std::string& s, std::string& host, unsigned short& port);

}  // namespace godwit
