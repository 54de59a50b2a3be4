// One CSV field, quoted per RFC 4180 when it holds a comma, quote or line
// break.
#pragma once

#include <string>

namespace godwit::detail {

inline std::string csv_field(const std::string& s) {
  if (s.find_first_of(",\"\n\r") == std::string::npos) return s;
  std::string q = "\"";
  for (char c : s) {
    if (c == '"') q += '"';
    q += c;
  }
  return q + "\"";
}

}  // namespace godwit::detail
