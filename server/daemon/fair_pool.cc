#include "fair_pool.h"

#include <pthread.h>

#include <chrono>
#include <cmath>
#include <ctime>

#include "job_priority.h"
#include "thread_entry.h"

namespace godwit {
namespace {

double thread_cpu_s() {
  timespec ts{};
  ::clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

}  // namespace

FairPool::FairPool(Options options) : options_(std::move(options)) {
  for (size_t i = 0; i < options_.threads; ++i)
    threads_.emplace_back([this] { thread_entry(options_.name, [this] { loop(); }); });
}

FairPool::~FairPool() {
  {
    std::lock_guard lock(mu_);
    stopping_ = true;
  }
  wake_.notify_all();
  for (auto& t : threads_) t.join();
}

double FairPool::now_s() const {
  return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

double FairPool::decayed(const Key& k, double now) const {
  return k.cost_s * std::exp(-(now - k.cost_at_s) / options_.decay_s);
}

void FairPool::post(const std::string& key, std::function<void()> task) {
  {
    std::lock_guard lock(mu_);
    keys_[key].tasks.emplace_back(next_seq_++, std::move(task));
    ++waiting_;
  }
  wake_.notify_one();
}

size_t FairPool::waiting() const {
  std::lock_guard lock(mu_);
  return waiting_;
}

void FairPool::loop() {
  ::pthread_setname_np(::pthread_self(), options_.name.substr(0, 15).c_str());
  lower_this_thread_priority(options_.nice, options_.idle_class);  // when refused, the thread runs as before
  std::unique_lock lock(mu_);
  for (;;) {
    wake_.wait(lock, [this] { return stopping_ || waiting_ > 0; });
    if (stopping_) return;
    // The key with the least recent cost among those waiting; keys with
    // nothing waiting and their cost spent are forgotten on the way.
    const double now = now_s();
    auto best = keys_.end();
    double best_cost = 0;
    for (auto it = keys_.begin(); it != keys_.end();) {
      const double cost = decayed(it->second, now);
      if (it->second.tasks.empty()) {
        it = cost < 1e-6 ? keys_.erase(it) : std::next(it);
        continue;
      }
      if (best == keys_.end() || cost < best_cost ||
          (cost == best_cost && it->second.tasks.front().first < best->second.tasks.front().first)) {
        best = it;
        best_cost = cost;
      }
      ++it;
    }
    const std::string key = best->first;
    auto task = std::move(best->second.tasks.front().second);
    best->second.tasks.pop_front();
    --waiting_;
    lock.unlock();
    const double cpu0 = thread_cpu_s();
    task();
    const double spent_s = thread_cpu_s() - cpu0;
    task = nullptr;  // what it holds goes before the lock is taken
    lock.lock();
    Key& k = keys_[key];
    const double at = now_s();
    k.cost_s = decayed(k, at) + spent_s;
    k.cost_at_s = at;
  }
}

}  // namespace godwit
