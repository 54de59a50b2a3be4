// A job run as tasks: planned (task_plan.h), its tasks run by a TaskRunner,
// their results merged and the job finished (confirmation, versions,
// verdicts, report files) by the same code whoever ran the tasks.
//
// The plan is that of a job run in one process: a locate job's streams are
// its runs of consecutive files and the files not readable whole
// (plan_locate), a reconcile job's the runs of its timeline
// (plan_reconcile); each stream splits into (span x batch of masters)
// tasks, SegmentSpecs (job_spec.h) that JobRunner::run runs wherever it is.
// A TaskRunner is where they run: here, one after another
// (LocalTaskRunner), or on the queue's workers (distributed_jobs.h). Its
// results, one locate document with exact numbers and evidence per task,
// are what a store of task results would keep: a task's id hashes its job
// id, its place and its spec.
//
// Thread contract: run_planned may run several jobs concurrently; a
// TaskRunner is used by one job at a time.
#pragma once

#include <functional>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "job_runner.h"
#include "task_plan.h"
#include "task_runner.h"

namespace godwit {

// Runs each task here with `runner` (which must outlive it), in plan order.
class LocalTaskRunner : public TaskRunner {
 public:
  explicit LocalTaskRunner(const JobRunner& runner) : runner_(runner) {}
  Result<std::vector<nlohmann::json>> run(const std::string& job_id, const std::vector<PlannedTask>& tasks,
                                          const std::function<void(double)>& progress,
                                          const std::function<bool()>& should_stop,
                                          const std::function<void(std::string_view)>& warn) override;

 private:
  const JobRunner& runner_;
};

// A prepared locate or reconcile job (JSON as journaled) run as tasks on
// `tasks`; the same document as JobRunner::run, plus "tasks": their count,
// and "searches": the runner's SearchCounts (task_runner.h).
// `report`: as JobRunner::run's.
Result<nlohmann::json> run_planned(const JobRunner& runner, TaskRunner& tasks, const PlanOptions& plan,
                                   const std::string& job_id, const nlohmann::json& spec,
                                   const std::function<void(double)>& progress,
                                   const std::function<bool()>& should_stop,
                                   const std::function<void(std::string_view)>& warn,
                                   const ReportFiles* report = nullptr);

}  // namespace godwit
