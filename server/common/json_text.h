// JSON text for files and the wire, whatever the strings hold.
//
// File names need not be valid UTF-8 (a logger may write Latin-1 names);
// nlohmann::json throws when it dumps such a string. json_text() writes
// each invalid byte as U+FFFD instead, so a document always serializes;
// a caller that must keep a path usable (the journal, a drop-folder file)
// checks it with is_valid_utf8() first.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <string_view>

namespace godwit {

inline std::string json_text(const nlohmann::json& j, int indent = -1) {
  return j.dump(indent, ' ', false, nlohmann::json::error_handler_t::replace);
}

// Well-formed UTF-8 (RFC 3629: no overlong forms, surrogates or values over U+10FFFF).
bool is_valid_utf8(std::string_view s);

// `s` with each byte that is not part of well-formed UTF-8 written as %XX
// (hex): "h\xE9.flac" -> "h%E9.flac". Valid text is returned unchanged.
std::string escape_invalid_utf8(std::string_view s);

}  // namespace godwit
