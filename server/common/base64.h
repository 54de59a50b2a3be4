// Standard base64 (RFC 4648 section 4): decoding for inline spots (padding
// optional; whitespace rejected; empty on malformed input), encoding (with
// padding) for report files served over the protocol.
#pragma once

#include <optional>
#include <string>
#include <string_view>

namespace godwit {

std::optional<std::string> base64_decode(std::string_view in);
std::string base64_encode(std::string_view in);

}  // namespace godwit
