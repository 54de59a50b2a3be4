// The store of record's schema: ordered migrations, applied in code.
//
// `PRAGMA user_version` holds the number of migrations applied. Opening a
// store applies the missing ones in order, each in its own transaction
// together with its user_version, so a crash mid-migration leaves the
// previous version whole. A store whose version is newer than this build
// knows is refused (it would be written with a schema we cannot read).
//
//   1  stations, jobs, recordings, masters, detections, placements
//   2  searches (recording x master x search-options fingerprint: what has
//      been searched, for reusing a recording's search) and the indexes of
//      the history queries (airings, proof of performance)
//   3  search_results (a piece of a run x a master: its matches; a
//      detection's evidence: kept for reuse, stored_tasks.h) and
//      file_digests (a file's SHA-256 by device, inode, size and mtime)
//
// Every row carries its station and the job that wrote it; times on the
// station's local clock are LocalSeconds (civil_time.h) in *_local columns,
// times of our own (jobs) are Unix seconds in *_utc columns.
//
// Thread contract: plain functions on a connection the caller owns.
#pragma once

#include <string>
#include <vector>

#include "sqlite_db.h"

namespace godwit {

// The migrations' SQL, in order; migration i takes the store to version i+1.
const std::vector<std::string>& store_migrations();
inline int store_schema_version() { return static_cast<int>(store_migrations().size()); }

// Brings `db` to `target` (default: this build's version). Errors: io, and
// usage for a store newer than this build.
Status migrate_store(SqliteDb& db, int target = -1);

}  // namespace godwit
