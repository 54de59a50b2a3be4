#include "fair_pool.h"

#include <doctest/doctest.h>

#include <pthread.h>
#include <sched.h>
#include <sys/resource.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <chrono>
#include <condition_variable>
#include <ctime>
#include <mutex>
#include <string>
#include <vector>

using namespace godwit;

namespace {

// A gate tasks wait at until the test opens it.
struct Gate {
  std::mutex mu;
  std::condition_variable cv;
  bool open = false;
  void release() {
    {
      std::lock_guard lock(mu);
      open = true;
    }
    cv.notify_all();
  }
  void wait() {
    std::unique_lock lock(mu);
    cv.wait(lock, [this] { return open; });
  }
};

// Spends `cpu_s` of this thread's CPU time (what the pool charges).
void burn_cpu(double cpu_s) {
  auto now = [] {
    timespec ts{};
    ::clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
    return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
  };
  const double until = now() + cpu_s;
  volatile unsigned sink = 0;
  while (now() < until) sink = sink + 1;
}

// Runs tasks in order and keeps their labels.
struct Order {
  std::mutex mu;
  std::condition_variable cv;
  std::vector<std::string> labels;
  void add(const std::string& s) {
    {
      std::lock_guard lock(mu);
      labels.push_back(s);
    }
    cv.notify_all();
  }
  std::vector<std::string> wait_for(size_t n) {
    std::unique_lock lock(mu);
    cv.wait(lock, [&] { return labels.size() >= n; });
    return labels;
  }
};

}  // namespace

TEST_CASE("fair pool: a quiet address's task goes before the waiting tasks of an address that used the CPU") {
  // One thread: while the busy address's first task runs, three more of
  // its tasks and then one of another address wait. Posted first, the busy
  // address's tasks would all go first (first in, first out); charged for
  // its first task's CPU, it waits for the quiet one.
  FairPool pool(FairPool::Options{1, "gw-test", 0, 60});
  Gate gate;
  Order order;
  pool.post("10.0.0.1", [&] {
    gate.wait();
    burn_cpu(0.02);
    order.add("busy-1");
  });
  for (int i = 2; i <= 4; ++i) pool.post("10.0.0.1", [&, i] { order.add("busy-" + std::to_string(i)); });
  pool.post("10.0.0.2", [&] { order.add("quiet-1"); });
  gate.release();
  const auto got = order.wait_for(5);
  CHECK(got == std::vector<std::string>{"busy-1", "quiet-1", "busy-2", "busy-3", "busy-4"});
  CHECK(pool.waiting() == 0);
}

TEST_CASE("fair pool: tasks of one address run in the order posted") {
  FairPool pool(FairPool::Options{1, "gw-test", 0, 60});
  Gate gate;
  Order order;
  pool.post("a", [&] { gate.wait(); order.add("0"); });
  for (int i = 1; i < 6; ++i) pool.post("a", [&, i] { burn_cpu(0.001); order.add(std::to_string(i)); });
  gate.release();
  CHECK(order.wait_for(6) == std::vector<std::string>{"0", "1", "2", "3", "4", "5"});
}

TEST_CASE("fair pool: threads are named and run below the caller's priority by the nice given") {
  FairPool pool(FairPool::Options{1, "gw-heavy-test", 5, 2});
  std::mutex mu;
  std::condition_variable cv;
  bool done = false;
  std::string name;
  int nice_seen = 0;
  const int own = ::getpriority(PRIO_PROCESS, static_cast<id_t>(::syscall(SYS_gettid)));
  pool.post("a", [&] {
    char buf[16] = {};
    ::pthread_getname_np(::pthread_self(), buf, sizeof buf);
    const int n = ::getpriority(PRIO_PROCESS, static_cast<id_t>(::syscall(SYS_gettid)));
    std::lock_guard lock(mu);
    name = buf;
    nice_seen = n;
    done = true;
    cv.notify_all();
  });
  std::unique_lock lock(mu);
  cv.wait(lock, [&] { return done; });
  CHECK(name == "gw-heavy-test");  // 13 bytes: within Linux's 15
  // Linux caps the nice value at 19 (sched(7)).
  CHECK(nice_seen == std::min(own + 5, 19));
}

TEST_CASE("fair pool: with idle_class its threads run in Linux's idle scheduling class") {
  // sched(7): SCHED_IDLE threads run only when nothing else wants the core.
  for (const bool idle : {true, false}) {
    FairPool pool(FairPool::Options{1, "gw-idle-test", 0, 2, idle});
    std::mutex mu;
    std::condition_variable cv;
    int policy = -1;
    pool.post("a", [&] {
      std::lock_guard lock(mu);
      policy = ::sched_getscheduler(0);
      cv.notify_all();
    });
    std::unique_lock lock(mu);
    cv.wait(lock, [&] { return policy != -1; });
    CHECK(policy == (idle ? SCHED_IDLE : SCHED_OTHER));
  }
  // The caller's own thread is left as it was.
  CHECK(::sched_getscheduler(0) == SCHED_OTHER);
}
