// A finished reconciliation into the store of record: ReconcileResult
// (reconcile_job.h) turned into a JobRecord (record_store.h) and written
// in one transaction. Called after a reconcile finishes: by the command
// line (`godwit reconcile --state-dir`), the daemon's reconcile jobs (local
// or through the queue) and the drop folder's day report.
//
// The station: RecordContext::station when given, else what the first
// recording's file name holds before its timestamp
// ("kestrel-fm-20260314T060000.flac" -> "kestrel-fm"), else "default".
//
// Thread contract: plain functions; RecordStore is safe for concurrent use.
#pragma once

#include <string>
#include <vector>

#include "godwit/compliance/reconcile_job.h"
#include "record_store.h"

namespace godwit {

struct RecordContext {
  std::string station;    // empty: from the recordings' names
  std::string time_zone;  // the station's IANA zone, when known
  std::string key;        // empty: one is made (make_job_key)
  std::string source = "cli";
  std::string schedule;   // the planned log's path
};

// "<source>-20261203T091500Z-<8 hex digits>": unique enough to tell runs apart.
std::string make_job_key(const std::string& source);

// The station a recording's file name names (see above); "default" when none.
std::string station_from_name(const std::string& path, const std::string& name_pattern);

// The search options that decide what a search finds, as canonical JSON
// text (its SHA-256 is the searches' fingerprint).
std::string search_options_json(const ReconcileOptions& options);

// Hashes the recordings (reusing a stored hash when a file's size and
// modification time are unchanged) and masters (with a store: through its
// file_digests, by stat), and builds the rows.
JobRecord job_record(const ReconcileResult& r, const ReconcileOptions& options, const RecordContext& context,
                     RecordStore* store);

// job_record, then write_job. Errors: io (the store cannot be written).
Status record_reconcile(RecordStore& store, const ReconcileResult& r, const ReconcileOptions& options,
                        const RecordContext& context);

}  // namespace godwit

namespace godwit {

// record_reconcile into STATE_DIR/store.sqlite (opened, created when
// missing, and closed). Errors: io, usage (a store newer than this build).
Status record_reconcile_in(const std::string& state_dir, const ReconcileResult& r, const ReconcileOptions& options,
                           const RecordContext& context);

}  // namespace godwit
