// PathGuard: every path a request names must lie under a configured root.
//
// A path is made absolute, resolved through symlinks (std::filesystem::
// weakly_canonical, so a not-yet-existing tail is allowed) and accepted
// only when the result is a root or lies inside one. `..` and symlinks that
// lead outside are therefore refused.
//
// Thread contract: immutable after construction; safe for concurrent use.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace godwit {

class PathGuard {
 public:
  explicit PathGuard(const std::vector<std::string>& roots);
  // The resolved path, or empty when it lies outside every root.
  std::optional<std::string> resolve(const std::string& path) const;
  const std::vector<std::string>& roots() const { return roots_; }

 private:
  std::vector<std::string> roots_;  // canonical
};

}  // namespace godwit
