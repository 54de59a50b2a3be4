#include "library_scan.h"

#include <algorithm>
#include <cctype>
#include <filesystem>

namespace godwit {

bool has_audio_extension(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return std::tolower(c); });
  for (const char* e : {".wav", ".flac", ".ogg", ".opus", ".mp3", ".aif", ".aiff"})
    if (ext == e) return true;
  return false;
}

Result<std::vector<std::string>> scan_library(const std::string& dir) {
  namespace fs = std::filesystem;
  std::error_code ec;
  if (!fs::is_directory(dir, ec))
    return Error{ErrorCode::not_found, "library folder does not exist", dir, std::nullopt};
  std::vector<std::string> files;
  for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec)) {
    if (!it->is_regular_file(ec)) continue;
    if (has_audio_extension(it->path().string())) files.push_back(it->path().string());
  }
  if (ec) return Error{ErrorCode::unreadable, "cannot list: " + ec.message(), dir, std::nullopt};
  std::sort(files.begin(), files.end());
  if (files.empty())
    return Error{ErrorCode::empty, "no audio files (wav, flac, ogg, opus, mp3, aiff) in the library", dir,
                 std::nullopt};
  return files;
}

}  // namespace godwit
