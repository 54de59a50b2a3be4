// Housekeeper: the daemon's upkeep on a schedule, on a thread of its own:
// retention of the store of record and of finished jobs (godwitd_main.cc
// says which), run once soon after start and then every `interval_s`.
//
// Thread contract: start() once, stop() (or the destructor) wakes and
// joins the thread; a task runs through guarded() (error_boundary.h), so
// one that throws is logged and the next run comes as planned.
#pragma once

#include <condition_variable>
#include <functional>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

namespace godwit {

class Housekeeper {
 public:
  struct Task {
    std::string name;  // for the log
    std::function<void()> run;
  };
  Housekeeper(std::vector<Task> tasks, double interval_s, double first_after_s = 1)
      : tasks_(std::move(tasks)), interval_s_(interval_s), first_after_s_(first_after_s) {}
  ~Housekeeper() { stop(); }
  Housekeeper(const Housekeeper&) = delete;
  Housekeeper& operator=(const Housekeeper&) = delete;
  void start();
  void stop();

 private:
  void loop();
  std::vector<Task> tasks_;
  double interval_s_, first_after_s_;
  std::mutex mu_;
  std::condition_variable cv_;
  bool stopping_ = false;  // GUARDED_BY(mu_)
  std::thread thread_;
};

}  // namespace godwit
