// Writing a file so that readers see either the old content or the whole
// new content: write a temporary beside it, fsync, rename, fsync the folder.
// On any failure the temporary is removed and the target is untouched.
#pragma once

#include <string>

#include "godwit/core/error.h"

namespace godwit {

Status write_file_atomically(const std::string& path, const std::string& content);

// Removes the temporaries (".<name>.tmp.<pid>") that a process killed
// mid-write left in `dir`. REQUIRES: no one writes there meanwhile.
void remove_stale_temporaries(const std::string& dir);

}  // namespace godwit
