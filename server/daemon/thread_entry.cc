#include "thread_entry.h"

#include <spdlog/spdlog.h>

#include <cstdlib>

#include "error_boundary.h"

namespace godwit {

void thread_entry(const std::string& name, const std::function<void()>& loop) {
  try {
    loop();
  } catch (...) {
    spdlog::critical("{}", internal_error_message("thread '" + name + "'"));
    spdlog::shutdown();  // flushed before the abort
    std::abort();
  }
}

}  // namespace godwit
