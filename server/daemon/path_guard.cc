#include "path_guard.h"

#include <filesystem>

namespace godwit {

PathGuard::PathGuard(const std::vector<std::string>& roots) {
  namespace fs = std::filesystem;
  for (const auto& r : roots) {
    std::error_code ec;
    auto c = fs::weakly_canonical(fs::absolute(r, ec), ec);
    if (!ec) roots_.push_back(c.string());
  }
}

std::optional<std::string> PathGuard::resolve(const std::string& path) const {
  namespace fs = std::filesystem;
  if (path.empty() || path.find('\0') != std::string::npos) return std::nullopt;
  std::error_code ec;
  const fs::path abs = fs::absolute(path, ec);
  if (ec) return std::nullopt;
  const fs::path c = fs::weakly_canonical(abs, ec);
  if (ec) return std::nullopt;
  const std::string s = c.string();
  for (const auto& r : roots_) {
    if (s == r) return s;
    const std::string prefix = r.back() == '/' ? r : r + "/";
    if (s.compare(0, prefix.size(), prefix) == 0) return s;
  }
  return std::nullopt;
}

}  // namespace godwit
