// Writing a file so that readers see either the old content or the whole
// new content: write a temporary beside it, fsync, rename, fsync the folder.
// On any failure the temporary is removed and the target is untouched.
#pragma once

#include <string>

#include "godwit/error.h"

namespace godwit {

Status write_file_atomically(const std::string& path, const std::string& content);

}  // namespace godwit
