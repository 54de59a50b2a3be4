// The record in the daemon: the ops `airings` and `proof` (PROTOCOL.md),
// and the hook that writes each finished reconciliation (a reconcile job,
// local or through the queue, and the drop folder's day report) into
// STATE/store.sqlite.
//
//   airings {from, to, station?, spot? | advertiser?, limit?, cursor?}
//           -> {"ok":true,"airings":[...],"next"?: cursor}
//   proof   {from, to, advertiser | spot} -> {"ok":true,"proof":{...}}
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
#include "record_store.h"

namespace godwit {

// The request objects' fields as described above; errors as the wire's
// bad_request (a field missing or mistyped, an unknown station) or io.
Result<nlohmann::json> airings_op(RecordStore& store, const nlohmann::json& req);
Result<nlohmann::json> proof_op(RecordStore& store, const nlohmann::json& req);

// Registers the ops with `dispatcher`, and the hook in `runner` (before the
// JobRunner is made from it; its time_zone is recorded as the station's).
void attach_record(RecordStore& store, Dispatcher& dispatcher);
void attach_record(RecordStore& store, RunnerConfig& runner);
// When the store could not be opened: the ops answer `unavailable` with why.
void attach_record_unavailable(const Error& why, Dispatcher& dispatcher);

}  // namespace godwit
