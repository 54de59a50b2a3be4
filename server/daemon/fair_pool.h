// FairPool: threads that run tasks, each task posted under a key (the
// client's address), taking next the oldest task of the key that used the
// least CPU recently. One address sending a stream of costly lines then
// cannot hold back another address's requests behind its own: while that
// address has tasks waiting, a task of a quieter address goes first.
//
//   cost   CPU seconds the pool's thread spent in each task (the thread's
//          CPU clock, so time waiting for a core is not charged), summed
//          per key and decaying with a time constant of `decay_s`.
//   order  among keys with tasks waiting, the least cost first (ties: the
//          oldest task); within a key, first posted first run.
//
// The threads are named `name` (as `top -H` and /proc show them) and raise
// their nice value by `nice` (job_priority.h), for bulk work that should
// wait while short requests want a core. A task must not throw (the
// session's tasks hold the request's error boundary); one that does ends
// the process through thread_entry (thread_entry.h).
//
// The destructor stops the threads once their current tasks are done and
// drops the tasks still waiting (as boost::asio::thread_pool does).
//
// Thread contract: post() from any thread.
#pragma once

#include <condition_variable>
#include <cstddef>
#include <deque>
#include <functional>
#include <map>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

namespace godwit {

class FairPool {
 public:
  struct Options {
    size_t threads = 4;
    std::string name = "gw-request";  // at most 15 bytes (Linux thread names)
    int nice = 0;                     // added to the threads' nice value
    double decay_s = 2;               // the cost's time constant
    bool idle_class = false;          // the threads in Linux's idle class too (job_priority.h)
  };
  explicit FairPool(Options options);
  ~FairPool();
  FairPool(const FairPool&) = delete;
  FairPool& operator=(const FairPool&) = delete;

  void post(const std::string& key, std::function<void()> task);
  // Tasks waiting (not running), for tests.
  size_t waiting() const;

 private:
  struct Key {
    std::deque<std::pair<unsigned long long, std::function<void()>>> tasks;  // (sequence, task)
    double cost_s = 0;                                                       // as of `cost_at_s`
    double cost_at_s = 0;
  };
  void loop();
  double now_s() const;
  double decayed(const Key& k, double now) const;

  Options options_;
  mutable std::mutex mu_;
  std::condition_variable wake_;
  std::map<std::string, Key> keys_;  // GUARDED_BY(mu_)
  unsigned long long next_seq_ = 0;  // GUARDED_BY(mu_)
  size_t waiting_ = 0;               // GUARDED_BY(mu_)
  bool stopping_ = false;            // GUARDED_BY(mu_)
  std::vector<std::thread> threads_;
};

}  // namespace godwit
