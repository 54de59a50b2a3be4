// ThreadPool: a fixed set of threads running one parallel loop at a time.
//
// `run(n, fn)` calls fn(i, worker) for every i in [0, n) and returns when
// all calls have returned; the calling thread takes part as worker 0.
// Which worker gets which i varies, so fn must give the same result
// whichever worker runs it (results never depend on the thread count).
//
// Thread contract: `run` from one thread at a time.
#pragma once

#include <condition_variable>
#include <cstddef>
#include <functional>
#include <mutex>
#include <thread>
#include <vector>

namespace godwit::detail {

class ThreadPool {
 public:
  // threads <= 0: one per hardware thread.
  explicit ThreadPool(int threads);
  ~ThreadPool();
  ThreadPool(const ThreadPool&) = delete;
  ThreadPool& operator=(const ThreadPool&) = delete;

  size_t workers() const { return threads_.size() + 1; }
  void run(size_t n, const std::function<void(size_t i, size_t worker)>& fn);

 private:
  void loop(size_t worker);
  void work(size_t worker);

  std::vector<std::thread> threads_;
  std::mutex mu_;
  std::condition_variable start_cv_, done_cv_;
  const std::function<void(size_t, size_t)>* fn_ = nullptr;  // GUARDED_BY(mu_)
  size_t n_ = 0, next_ = 0, busy_ = 0;                        // GUARDED_BY(mu_)
  unsigned long generation_ = 0;                              // GUARDED_BY(mu_)
  bool stop_ = false;                                         // GUARDED_BY(mu_)
};

}  // namespace godwit::detail
