// DistributedJobs: runs a daemon's job through the queue instead of on its
// own worker: plans the tasks (task_plan.h), enqueues those not stored yet,
// follows their progress across all workers, and merges their results.
//
// The job itself stays in the submitting daemon's journal: if that daemon
// restarts, the job runs again, and its tasks already stored are not run
// twice. While Redis is unreachable the job waits (and says so); a
// dead-lettered task fails the job with the task's reason; cancelling the
// job marks it cancelled for every worker.
//
// Thread contract: safe for concurrent use (each run has its connection).
#pragma once

#include <functional>
#include <nlohmann/json.hpp>
#include <string>

#include "task_queue.h"

namespace godwit {

class DistributedJobs {
 public:
  DistributedJobs(QueueUrl url, QueueOptions options, size_t templates_per_task);
  Result<nlohmann::json> run(const std::string& job_id, const nlohmann::json& spec,
                             const std::function<void(double)>& progress, const std::function<bool()>& should_stop,
                             const std::function<void(std::string_view)>& warn) const;
  Result<nlohmann::json> cluster() const;

 private:
  QueueUrl url_;
  QueueOptions options_;
  size_t templates_per_task_;
};

}  // namespace godwit
