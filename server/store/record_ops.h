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

#include <nlohmann/json.hpp>

#include "dispatcher.h"
#include "job_runner.h"
#include "planned_job.h"
#include "record_store.h"

namespace godwit {

// Registers the ops with `dispatcher`, and the hook in `runner` (before the
// JobRunner is made from it; its time_zone is recorded as the station's).
void attach_record(RecordStore& store, Dispatcher& dispatcher);
void attach_record(RecordStore& store, RunnerConfig& runner);
// Jobs run as tasks split at their files (planned_job.h) whose
// (piece x master) results are kept in the store and reused
// (stored_tasks.h): each hour of a day searched once, however often the
// day is reconciled. `reconcile_only`: locate jobs run as `otherwise` does
// (the default: JobRunner::run here).
JobExecutor stored_executor(RecordStore& store, const JobRunner& runner, bool reconcile_only = false,
                            JobExecutor otherwise = nullptr);
// When the store could not be opened: the ops answer `unavailable` with why.
void attach_record_unavailable(const Error& why, Dispatcher& dispatcher);

}  // namespace godwit
