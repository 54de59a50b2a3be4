#include "atomic_file.h"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <filesystem>

namespace godwit {

Status write_file_atomically(const std::string& path, const std::string& content) {
  namespace fs = std::filesystem;
  const fs::path target(path);
  const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
  // Built by appending: `"." + std::string&&` trips GCC 12's -Wrestrict false positive (PR 105329).
  std::string name = ".";
  name += target.filename().string();
  name += ".tmp.";
  name += std::to_string(getpid());
  const std::string tmp = (dir / name).string();
  auto fail = [&](const std::string& what) -> Status {
    const std::string reason = std::strerror(errno);
    ::unlink(tmp.c_str());
    return Error{ErrorCode::io, what + ": " + reason, path, std::nullopt};
  };
  const int fd = ::open(tmp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) return Error{ErrorCode::io, std::string("cannot create: ") + std::strerror(errno), path, std::nullopt};
  size_t done = 0;
  while (done < content.size()) {
    const ssize_t n = ::write(fd, content.data() + done, content.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      ::close(fd);
      return fail("write failed");
    }
    done += static_cast<size_t>(n);
  }
  if (::fsync(fd) != 0) {
    ::close(fd);
    return fail("fsync failed");
  }
  if (::close(fd) != 0) return fail("close failed");
  if (::rename(tmp.c_str(), path.c_str()) != 0) return fail("rename failed");
  const int dfd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (dfd >= 0) {
    ::fsync(dfd);
    ::close(dfd);
  }
  return ok_status();
}

void remove_stale_temporaries(const std::string& dir) {
  namespace fs = std::filesystem;
  std::error_code ec;
  for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string n = it->path().filename().string();
    if (n.size() > 1 && n[0] == '.' && n.find(".tmp.") != std::string::npos && it->is_regular_file(ec)) {
      std::error_code rc;
      fs::remove(it->path(), rc);
    }
  }
}

}  // namespace godwit
