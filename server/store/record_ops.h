// The record in the daemon: the ops `airings` and `proof` (PROTOCOL.md,
// record_requests.h), and the hook that writes each finished
// reconciliation (a reconcile job, local or through the queue, and the
// drop folder's day report) into STATE/store.sqlite.
//
// The queries run on the daemon's request handler threads (never its I/O
// thread): an airings page is bounded (limit) and indexed; a proof reads
// one advertiser's range.
//
// Thread contract: the store must outlive the dispatcher and the runner.
#pragma once

#include <functional>
#include <memory>
#include <nlohmann/json.hpp>

#include "dispatcher.h"
#include "job_runner.h"
#include "planned_job.h"
#include "record_store.h"
#include "task_runner.h"

namespace godwit {

// Registers the ops with `dispatcher`, and the hook in `runner` (before the
// JobRunner is made from it; its time_zone is recorded as the station's).
void attach_record(RecordStore& store, Dispatcher& dispatcher);
void attach_record(RecordStore& store, RunnerConfig& runner);
// Where a stored job's tasks that are not kept run: a new TaskRunner per
// job (task_runner.h), e.g. the queue's workers (distributed_jobs.h).
using TaskRunnerMaker = std::function<std::unique_ptr<TaskRunner>()>;
// Locate and reconcile jobs run as tasks split at their files
// (planned_job.h, PlanOptions::at_files; `plan` gives the masters per
// task and the span a long file's body splits into) whose
// (piece x master) results are kept in the store and reused
// (stored_tasks.h): each hour searched once, however often and by
// whichever job (a client's locate or reconcile, the drop folder's hour or
// day) it is searched. `searcher`: where the pieces not kept are searched
// (default: here, LocalTaskRunner); their results are kept here whoever
// searched them. Other jobs run as `otherwise` does (default:
// JobRunner::run here).
JobExecutor stored_executor(RecordStore& store, const JobRunner& runner, PlanOptions plan = {},
                            TaskRunnerMaker searcher = nullptr, JobExecutor otherwise = nullptr);
// When the store could not be opened: the ops answer `unavailable` with why.
void attach_record_unavailable(const Error& why, Dispatcher& dispatcher);

}  // namespace godwit
