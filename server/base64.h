// Standard base64 (RFC 4648 section 4) decoding for inline spots. Padding
// optional; whitespace rejected. Empty on malformed input.
#pragma once

#include <optional>
#include <string>
#include <string_view>

namespace godwit {

std::optional<std::string> base64_decode(std::string_view in);

}  // namespace godwit
