#include "queue_worker.h"

#include "error_boundary.h"
#include "job_priority.h"
#include "thread_entry.h"
#include "wire_code.h"

#include <spdlog/spdlog.h>

#include <chrono>

namespace godwit {

QueueWorker::QueueWorker(QueueUrl url, QueueOptions options, const JobRunner& runner, size_t threads, std::string name)
    : url_(std::move(url)), options_(options), runner_(runner), threads_n_(std::max<size_t>(1, threads)),
      name_(std::move(name)), running_(threads_n_), entries_(threads_n_) {}

QueueWorker::~QueueWorker() { stop(); }

void QueueWorker::start() {
  for (size_t i = 0; i < threads_n_; ++i)
    threads_.emplace_back([this, i] { thread_entry("queue worker " + std::to_string(i), [this, i] { loop(i); }); });
  threads_.emplace_back([this] { thread_entry("queue heartbeat", [this] { heartbeat_loop(); }); });
}

void QueueWorker::stop() {
  stop_.store(true);
  for (auto& t : threads_)
    if (t.joinable()) t.join();
  threads_.clear();
}

nlohmann::json QueueWorker::state() const {
  std::lock_guard lock(mu_);
  nlohmann::json running = nlohmann::json::array();
  for (const auto& r : running_)
    if (!r.empty()) running.push_back(r);
  return {{"name", name_}, {"threads", threads_n_}, {"running", running}, {"done", done_}, {"failed", failed_}};
}

void QueueWorker::heartbeat_loop() {
  TaskQueue q(url_, name_, options_);
  auto next = std::chrono::steady_clock::now();
  auto next_keep = next;
  // The tasks running here are claimed afresh well within claim_idle_s, so
  // that a long task is not taken by another worker while this one lives;
  // a worker that dies stops doing it, and its tasks are reclaimed.
  const double keep_s = std::min(options_.heartbeat_s, options_.claim_idle_s / 3);
  while (!stop_.load()) {
    const auto now = std::chrono::steady_clock::now();
    if (now >= next) {
      if (auto st = q.heartbeat(state()); !st) spdlog::debug("queue heartbeat: {}", st.error().message);
      next = now + std::chrono::milliseconds(static_cast<long>(options_.heartbeat_s * 1000));
    }
    if (now >= next_keep) {
      std::vector<std::pair<std::string, std::string>> held;  // consumer, entry
      {
        std::lock_guard lock(mu_);
        for (size_t i = 0; i < entries_.size(); ++i)
          if (!entries_[i].empty()) held.emplace_back(name_ + "/" + std::to_string(i), entries_[i]);
      }
      for (const auto& [consumer, entry] : held)
        if (auto st = q.keep(consumer, entry); !st) spdlog::debug("queue keep-alive: {}", st.error().message);
      next_keep = now + std::chrono::milliseconds(static_cast<long>(keep_s * 1000));
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(100));
  }
}

void QueueWorker::loop(size_t slot) {
  (void)lower_this_thread_priority(runner_.config().job_nice, runner_.config().idle_class);  // tasks run below requests
  // Each slot reads as its own consumer, so a slot's pending tasks are its own.
  TaskQueue q(url_, name_ + "/" + std::to_string(slot), options_);
  bool group_ready = false;
  auto last_complaint = std::chrono::steady_clock::now() - std::chrono::hours(1);
  auto complain = [&](const std::string& what) {
    if (std::chrono::steady_clock::now() - last_complaint > std::chrono::seconds(10)) {
      spdlog::warn("queue: {}", what);
      last_complaint = std::chrono::steady_clock::now();
    }
    std::this_thread::sleep_for(std::chrono::seconds(1));
  };
  while (!stop_.load()) {
    if (!group_ready) {
      if (auto st = q.ensure_group(); !st) {
        complain(st.error().message);
        continue;
      }
      group_ready = true;
    }
    auto next = q.next(1.0);
    if (!next) {
      complain(next.error().message);
      continue;
    }
    if (!next.value()) continue;
    const QueuedTask task = std::move(*next.value());
    if (auto c = q.cancelled(task.job); c && c.value()) {
      (void)q.drop(task);
      continue;
    }
    {
      std::lock_guard lock(mu_);
      running_[slot] = task.task;
      entries_[slot] = task.entry;
    }
    spdlog::info("task {} of job {} started (attempt {})", task.task, task.job, task.attempt);
    // Cancellation of the job is checked every two seconds at most.
    auto checked = std::chrono::steady_clock::now();
    bool job_cancelled = false;
    auto should_stop = [&] {
      if (stop_.load()) return true;
      if (std::chrono::steady_clock::now() - checked > std::chrono::seconds(2)) {
        checked = std::chrono::steady_clock::now();
        if (auto c = q.cancelled(task.job); c && c.value()) job_cancelled = true;
      }
      return job_cancelled;
    };
    // A malformed spec (JSON of the wrong shape) fails the task, not the daemon.
    Result<nlohmann::json> result = Error{ErrorCode::internal, "not run", "", std::nullopt};
    try {
      result = runner_.run(task.spec, [](double) {}, should_stop,
                           [&](std::string_view w) { spdlog::warn("task {}: {}", task.task, w); });
    } catch (const std::exception& e) {
      result = Error{ProtocolCode::bad_request, std::string("malformed task: ") + e.what(), "", std::nullopt};
    } catch (...) {  // the task's error boundary (error_boundary.h): it fails, the daemon carries on
      result = Error{ErrorCode::internal, internal_error_message("task " + task.task), "", std::nullopt};
    }
    {
      std::lock_guard lock(mu_);
      running_[slot].clear();
      entries_[slot].clear();
    }
    Status st = ok_status();
    if (result) {
      st = q.complete(task, result.value());
      if (st) {
        std::lock_guard lock(mu_);
        ++done_;
      }
      spdlog::info("task {} done", task.task);
    } else if (result.error().code == ErrorCode::cancelled && !job_cancelled) {
      // This daemon is stopping: the task stays pending and is reclaimed
      // by another worker after the idle time (no attempt is used up).
      spdlog::info("task {} left to the queue: stopping", task.task);
      continue;
    } else if (job_cancelled) {
      st = q.drop(task);
    } else {
      st = q.fail(task, result.error().describe());
      std::lock_guard lock(mu_);
      ++failed_;
      spdlog::warn("task {} failed (attempt {}): {}", task.task, task.attempt, result.error().describe());
    }
    // A result that could not be stored or acknowledged stays pending; it
    // is reclaimed and run again (storing twice keeps the first).
    if (!st) complain("task " + task.task + ": " + st.error().message);
  }
}

}  // namespace godwit
