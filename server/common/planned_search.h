// A job's search run as tasks (task_plan.h) on a TaskRunner
// (task_runner.h), merged, with the evidence of every detection: what a
// planned locate or reconcile job finishes from. reconcile_by_tasks is a
// whole reconcile job so (the command line with a store of record; the
// daemon's run_planned does the same with its JobRunner).
//
// Thread contract: plain functions; the runner is the caller's.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "godwit/compliance/reconcile_job.h"
#include "task_runner.h"

namespace godwit {

// Every run of a plan's timeline as a stream, under its search name, at its
// first file's rate (the rate ConcatSource reads it at; later files may
// have others).
void add_run_streams(const ReconcilePlan& plan, std::vector<Stream>& streams);

struct TaskSearch {
  LocateResult search;
  // One per match of `search`; empty when some detection has none (the
  // finish then gathers them).
  std::vector<std::optional<DetectionEvidence>> evidence;
  std::vector<PlannedTask> tasks;
};

// `base`: what every task carries (search fields, evidence); `evidence_options`:
// how the runner gathers evidence when it does so after the tasks.
Result<TaskSearch> search_by_tasks(TaskRunner& runner, const std::string& job_id, const SegmentSpec& base,
                                   const std::vector<Stream>& streams, const std::vector<std::string>& templates,
                                   const PlanOptions& plan, const ReconcileOptions& evidence_options,
                                   const std::function<void(double)>& progress,
                                   const std::function<bool()>& should_stop,
                                   const std::function<void(std::string_view)>& warn);

// A reconcile job searched by tasks on `runner` and finished here.
// `tasks_out`, when given, receives the number of tasks planned.
Result<ReconcileResult> reconcile_by_tasks(const ReconcileJob& job, ReconcileOptions options, TaskRunner& runner,
                                           const PlanOptions& plan, const std::string& job_id,
                                           const std::function<void(double)>& progress,
                                           const std::function<bool()>& should_stop,
                                           const std::function<void(std::string_view)>& warn,
                                           size_t* tasks_out = nullptr);

}  // namespace godwit
