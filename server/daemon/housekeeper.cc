#include "housekeeper.h"

#include <spdlog/spdlog.h>

#include <chrono>

#include "error_boundary.h"
#include "thread_entry.h"

namespace godwit {

void Housekeeper::start() {
  thread_ = std::thread([this] { thread_entry("housekeeper", [this] { loop(); }); });
}

void Housekeeper::stop() {
  {
    std::lock_guard lock(mu_);
    stopping_ = true;
  }
  cv_.notify_all();
  if (thread_.joinable()) thread_.join();
}

void Housekeeper::loop() {
  double wait_s = first_after_s_;
  for (;;) {
    {
      std::unique_lock lock(mu_);
      if (cv_.wait_for(lock, std::chrono::duration<double>(wait_s), [this] { return stopping_; })) return;
    }
    for (const auto& t : tasks_) {
      try {
        t.run();
      } catch (...) {  // the task's error boundary (error_boundary.h): logged, tried again next time
        spdlog::error("{}: {}", t.name, internal_error_message(""));
      }
    }
    wait_s = interval_s_;
  }
}

}  // namespace godwit
