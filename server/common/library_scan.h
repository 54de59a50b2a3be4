// The masters of a library folder: its audio files (by extension:
// wav, flac, ogg, opus, mp3, aif, aiff; any case), sorted by name; other
// files (sidecar metadata, notes) are ignored. Not recursive.
#pragma once

#include <string>
#include <vector>

#include "godwit/core/error.h"

namespace godwit {

Result<std::vector<std::string>> scan_library(const std::string& dir);
bool has_audio_extension(const std::string& path);

}  // namespace godwit
