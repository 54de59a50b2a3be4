// SHA-256 of files and strings (OpenSSL's libcrypto), as lowercase hex:
// recordings and masters are named in the record by their content, so a
// proof can show which exact file was heard.
//
// Thread contract: plain functions.
#pragma once

#include <string>
#include <string_view>

#include "godwit/core/error.h"

namespace godwit {

// Reads the whole file. Errors: not_found, unreadable, io.
Result<std::string> file_sha256(const std::string& path);
std::string sha256_hex(std::string_view bytes);

}  // namespace godwit
