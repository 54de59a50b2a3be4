#include "distributed_jobs.h"

#include <chrono>
#include <thread>

namespace godwit {

DistributedJobs::DistributedJobs(QueueUrl url, QueueOptions options, size_t templates_per_task)
    : url_(std::move(url)), options_(options), templates_per_task_(templates_per_task) {}

Result<nlohmann::json> DistributedJobs::cluster() const {
  TaskQueue q(url_, default_consumer_name(), options_);
  return q.cluster();
}

Result<nlohmann::json> DistributedJobs::run(const std::string& job_id, const nlohmann::json& spec,
                                            const std::function<void(double)>& progress,
                                            const std::function<bool()>& should_stop,
                                            const std::function<void(std::string_view)>& warn) const {
  TaskQueue q(url_, default_consumer_name() + "/submit", options_);
  const auto tasks = plan_tasks(job_id, spec, templates_per_task_);
  auto last_warning = std::chrono::steady_clock::now() - std::chrono::hours(1);
  auto waiting = [&](const Error& e) {
    if (std::chrono::steady_clock::now() - last_warning > std::chrono::seconds(10)) {
      warn("waiting for the queue: " + e.message);
      last_warning = std::chrono::steady_clock::now();
    }
    std::this_thread::sleep_for(std::chrono::seconds(1));
  };
  // Enqueue (again, after a restart: stored tasks are skipped).
  for (;;) {
    if (should_stop()) return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    auto st = q.ensure_group();
    if (st) st = q.enqueue(job_id, tasks);
    if (st) break;
    waiting(st.error());
  }
  for (;;) {
    if (should_stop()) {
      // Workers skip the job's tasks from now on, and stop a running one
      // within seconds. With Redis down they run them to the end, unseen.
      if (auto st = q.cancel(job_id); !st) warn("cancel not passed on to the workers: " + st.error().message);
      return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    }
    auto failed = q.failures(job_id);
    if (!failed) {
      waiting(failed.error());
      continue;
    }
    if (!failed.value().empty()) {
      const auto& [task, reason] = failed.value().front();
      return Error{ErrorCode::internal,
                   "task " + task + " failed " + std::to_string(options_.max_attempts) + " times: " + reason, "",
                   std::nullopt};
    }
    auto n = q.stored_count(job_id);
    if (!n) {
      waiting(n.error());
      continue;
    }
    progress(static_cast<double>(n.value()) / static_cast<double>(tasks.size()));
    if (n.value() >= tasks.size()) break;
    std::this_thread::sleep_for(std::chrono::milliseconds(200));
  }
  std::vector<nlohmann::json> results;
  for (const auto& t : tasks) {
    for (;;) {
      auto r = q.result(t.id);
      if (r && r.value()) {
        results.push_back(std::move(*r.value()));
        break;
      }
      if (!r) waiting(r.error());
      else return Error{ErrorCode::internal, "task " + t.id + " counted as stored but has no result", "", std::nullopt};
    }
  }
  auto merged = merge_results(spec, tasks, results);
  if (!merged) return merged.error();
  (void)q.forget(job_id, tasks);  // best effort: leftovers expire with nothing
  return merged;
}

}  // namespace godwit
