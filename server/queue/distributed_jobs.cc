#include "distributed_jobs.h"

#include <chrono>
#include <set>
#include <thread>

namespace godwit {

DistributedJobs::DistributedJobs(QueueUrl url, QueueOptions options, PlanOptions plan, const JobRunner& runner)
    : url_(std::move(url)), options_(options), plan_(plan), runner_(runner) {}

Result<nlohmann::json> DistributedJobs::cluster() const {
  TaskQueue q(url_, default_consumer_name(), options_);
  return q.cluster();
}

namespace {

// The queue as a TaskRunner: tasks enqueued, followed across every worker,
// their results read back; the job's leftovers forgotten once it is done.
class QueueTasks : public TaskRunner {
 public:
  explicit QueueTasks(const DistributedJobs& jobs) : jobs_(jobs) {}
  Result<std::vector<nlohmann::json>> run(const std::string& job_id, const std::vector<PlannedTask>& tasks,
                                          const std::function<void(double)>& progress,
                                          const std::function<bool()>& should_stop,
                                          const std::function<void(std::string_view)>& warn) override {
    return jobs_.run_tasks(job_id, tasks, progress, should_stop, warn);
  }
  void finished(const std::string& job_id, const std::vector<PlannedTask>& tasks) override { jobs_.forget(job_id, tasks); }

 private:
  const DistributedJobs& jobs_;
};

}  // namespace

Result<nlohmann::json> DistributedJobs::run(const std::string& job_id, const nlohmann::json& spec,
                                            const std::function<void(double)>& progress,
                                            const std::function<bool()>& should_stop,
                                            const std::function<void(std::string_view)>& warn,
                                            const ReportFiles* report) const {
  QueueTasks tasks(*this);
  return run_planned(runner_, tasks, plan_, job_id, spec, progress, should_stop, warn, report);
}

std::unique_ptr<TaskRunner> DistributedJobs::task_runner() const { return std::make_unique<QueueTasks>(*this); }

void DistributedJobs::forget(const std::string& job_id, const std::vector<PlannedTask>& tasks) const {
  // Best effort, once the job's result exists: leftovers expire with nothing.
  (void)TaskQueue(url_, default_consumer_name() + "/submit", options_).forget(job_id, tasks);
}

Result<std::vector<nlohmann::json>> DistributedJobs::run_tasks(const std::string& job_id,
                                                               const std::vector<PlannedTask>& tasks,
                                                               const std::function<void(double)>& progress,
                                                               const std::function<bool()>& should_stop,
                                                               const std::function<void(std::string_view)>& warn) const {
  std::vector<nlohmann::json> results;
  if (tasks.empty()) return results;
  TaskQueue q(url_, default_consumer_name() + "/submit", options_);
  std::set<std::string> ids;
  for (const auto& t : tasks) ids.insert(t.id);
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
    for (const auto& [task, reason] : failed.value())
      if (ids.count(task))  // not a task of an earlier plan under this id
        return Error{ErrorCode::internal,
                     "task " + task + " failed " + std::to_string(options_.max_attempts) + " times: " + reason, "",
                     std::nullopt};
    auto n = q.stored_count(job_id, tasks);
    if (!n) {
      waiting(n.error());
      continue;
    }
    progress(static_cast<double>(n.value()) / static_cast<double>(tasks.size()));
    if (n.value() >= tasks.size()) break;
    std::this_thread::sleep_for(std::chrono::milliseconds(200));
  }
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
  return results;
}

}  // namespace godwit
