#include "thread_pool.h"

namespace godwit::detail {

ThreadPool::ThreadPool(int threads) {
  size_t n = threads > 0 ? static_cast<size_t>(threads) : std::thread::hardware_concurrency();
  if (n == 0) n = 1;
  for (size_t w = 1; w < n; ++w) threads_.emplace_back([this, w] { loop(w); });
}

ThreadPool::~ThreadPool() {
  {
    std::lock_guard lock(mu_);
    stop_ = true;
  }
  start_cv_.notify_all();
  for (auto& t : threads_) t.join();
}

void ThreadPool::work(size_t worker) {
  std::unique_lock lock(mu_);
  while (next_ < n_) {
    const size_t i = next_++;
    ++busy_;
    const auto* fn = fn_;
    lock.unlock();
    (*fn)(i, worker);
    lock.lock();
    --busy_;
  }
  if (busy_ == 0) done_cv_.notify_all();
}

void ThreadPool::loop(size_t worker) {
  unsigned long seen = 0;
  for (;;) {
    {
      std::unique_lock lock(mu_);
      start_cv_.wait(lock, [&] { return stop_ || generation_ != seen; });
      if (stop_) return;
      seen = generation_;
    }
    work(worker);
  }
}

void ThreadPool::run(size_t n, const std::function<void(size_t, size_t)>& fn) {
  if (n == 0) return;
  if (threads_.empty() || n == 1) {
    for (size_t i = 0; i < n; ++i) fn(i, 0);
    return;
  }
  {
    std::lock_guard lock(mu_);
    fn_ = &fn;
    n_ = n;
    next_ = 0;
    ++generation_;
  }
  start_cv_.notify_all();
  work(0);
  std::unique_lock lock(mu_);
  done_cv_.wait(lock, [&] { return next_ >= n_ && busy_ == 0; });
  fn_ = nullptr;
}

}  // namespace godwit::detail
