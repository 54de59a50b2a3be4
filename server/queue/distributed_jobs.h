// DistributedJobs: runs a daemon's job through the queue instead of on its
// own worker: the job planned into tasks and finished from their results
// as run_planned does it (planned_job.h); the queue runs the tasks: it
// enqueues those not stored yet and follows their progress across all
// workers.
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
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "job_runner.h"
#include "planned_job.h"
#include "task_plan.h"
#include "task_queue.h"

namespace godwit {

class DistributedJobs {
 public:
  DistributedJobs(QueueUrl url, QueueOptions options, PlanOptions plan, const JobRunner& runner);
  // As JobRunner::run, `report` included: run_planned (planned_job.h) with
  // the queue's workers running the tasks.
  Result<nlohmann::json> run(const std::string& job_id, const nlohmann::json& spec,
                             const std::function<void(double)>& progress, const std::function<bool()>& should_stop,
                             const std::function<void(std::string_view)>& warn, const ReportFiles* report = nullptr) const;
  Result<nlohmann::json> cluster() const;

  // The queue as a TaskRunner does it: until every task is stored, their
  // results in plan order.
  Result<std::vector<nlohmann::json>> run_tasks(const std::string& job_id, const std::vector<PlannedTask>& tasks,
                                                const std::function<void(double)>& progress,
                                                const std::function<bool()>& should_stop,
                                                const std::function<void(std::string_view)>& warn) const;
  // What the queue keeps of a finished job's tasks, dropped (best effort).
  void forget(const std::string& job_id, const std::vector<PlannedTask>& tasks) const;
  // The queue as a TaskRunner (run_tasks, and forget once the job is
  // done), for a job planned elsewhere (record_ops.h's stored executor).
  // It must not outlive this.
  std::unique_ptr<TaskRunner> task_runner() const;

 private:
  QueueUrl url_;
  QueueOptions options_;
  PlanOptions plan_;
  const JobRunner& runner_;
};

}  // namespace godwit
