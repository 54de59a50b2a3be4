#include "store_schema.h"

namespace godwit {

const std::vector<std::string>& store_migrations() {
  static const std::vector<std::string> m = {
      // 1: the record.
      R"sql(
CREATE TABLE stations(
  id INTEGER PRIMARY KEY,
  name TEXT NOT NULL UNIQUE,
  time_zone TEXT NOT NULL DEFAULT '');
CREATE TABLE jobs(
  id INTEGER PRIMARY KEY,
  key TEXT NOT NULL UNIQUE,             -- the daemon's job id, or one made for a command-line run
  station_id INTEGER NOT NULL REFERENCES stations(id),
  kind TEXT NOT NULL,                   -- 'reconcile'
  source TEXT NOT NULL,                 -- 'cli', 'daemon'
  schedule TEXT NOT NULL DEFAULT '',    -- the planned log's path
  software TEXT NOT NULL,               -- godwit version
  options_json TEXT NOT NULL DEFAULT '{}',
  summary_json TEXT NOT NULL DEFAULT '{}',
  finished_utc INTEGER NOT NULL);
CREATE TABLE recordings(
  id INTEGER PRIMARY KEY,
  station_id INTEGER NOT NULL REFERENCES stations(id),
  path TEXT NOT NULL,
  sha256 TEXT NOT NULL,                 -- of the file's bytes; '' when it could not be read
  size_bytes INTEGER NOT NULL DEFAULT 0,
  mtime_ns INTEGER NOT NULL DEFAULT 0,
  start_local REAL,
  duration_s REAL NOT NULL DEFAULT 0,
  rate_hz REAL NOT NULL DEFAULT 0,
  codec TEXT NOT NULL DEFAULT '',
  channels INTEGER NOT NULL DEFAULT 0,
  error TEXT NOT NULL DEFAULT '',
  job_id INTEGER NOT NULL REFERENCES jobs(id),
  UNIQUE(station_id, path, sha256));
CREATE TABLE masters(
  id INTEGER PRIMARY KEY,
  station_id INTEGER NOT NULL REFERENCES stations(id),
  spot TEXT NOT NULL,
  sha256 TEXT NOT NULL,
  path TEXT NOT NULL DEFAULT '',
  title TEXT NOT NULL DEFAULT '',
  advertiser TEXT NOT NULL DEFAULT '',
  family TEXT NOT NULL DEFAULT '',
  length_s REAL NOT NULL DEFAULT 0,
  job_id INTEGER NOT NULL REFERENCES jobs(id),
  UNIQUE(station_id, spot, sha256));
CREATE TABLE detections(
  id INTEGER PRIMARY KEY,
  station_id INTEGER NOT NULL REFERENCES stations(id),
  recording_id INTEGER NOT NULL REFERENCES recordings(id),
  master_id INTEGER NOT NULL REFERENCES masters(id),
  job_id INTEGER NOT NULL REFERENCES jobs(id),
  spot TEXT NOT NULL,                   -- the version detected
  advertiser TEXT NOT NULL DEFAULT '',  -- its master's, when the job ran
  offset_ms INTEGER NOT NULL,           -- the key's offset: offset_s rounded to the millisecond
  offset_s REAL NOT NULL,               -- in the recording where it starts
  aired_local REAL NOT NULL,
  score REAL NOT NULL,
  polarity INTEGER NOT NULL,
  speed REAL NOT NULL,
  coverage REAL NOT NULL,
  length_s REAL NOT NULL DEFAULT 0,
  foreground_contrast REAL,
  spot_lufs REAL,
  programme_lufs REAL,
  missing_json TEXT NOT NULL DEFAULT '[]',
  unrecorded_json TEXT NOT NULL DEFAULT '[]',
  versions_json TEXT NOT NULL DEFAULT '[]',
  undetermined_json TEXT NOT NULL DEFAULT '[]',
  profile_json TEXT NOT NULL DEFAULT '{}',
  unscheduled INTEGER NOT NULL DEFAULT 0,
  UNIQUE(recording_id, master_id, offset_ms));
CREATE TABLE placements(
  id INTEGER PRIMARY KEY,
  station_id INTEGER NOT NULL REFERENCES stations(id),
  job_id INTEGER NOT NULL REFERENCES jobs(id),
  day TEXT NOT NULL,                    -- YYYY-MM-DD of planned_local
  slot TEXT NOT NULL,
  spot TEXT NOT NULL,                   -- as planned
  advertiser TEXT NOT NULL DEFAULT '',
  title TEXT NOT NULL DEFAULT '',
  planned_local REAL NOT NULL,
  planned TEXT NOT NULL,                -- as the report shows it
  window_s REAL NOT NULL,
  status TEXT NOT NULL,
  deviation_s REAL,
  detection_id INTEGER REFERENCES detections(id) ON DELETE SET NULL,
  detected_spot TEXT NOT NULL DEFAULT '',
  recorded_json TEXT NOT NULL DEFAULT '[]',
  unrecorded_json TEXT NOT NULL DEFAULT '[]',
  suggestion TEXT NOT NULL DEFAULT '',
  plan TEXT NOT NULL DEFAULT '',        -- the planned log's file name: what a re-run of it replaces
  UNIQUE(station_id, slot, planned_local));
CREATE INDEX detections_time ON detections(aired_local);
CREATE INDEX placements_time ON placements(planned_local);
)sql",
      // 2: searches, and the history queries' indexes.
      R"sql(
CREATE TABLE searches(
  recording_id INTEGER NOT NULL REFERENCES recordings(id),
  master_id INTEGER NOT NULL REFERENCES masters(id),
  options_sha256 TEXT NOT NULL,
  station_id INTEGER NOT NULL REFERENCES stations(id),
  job_id INTEGER NOT NULL REFERENCES jobs(id),
  searched_utc INTEGER NOT NULL,
  PRIMARY KEY(recording_id, master_id, options_sha256)) WITHOUT ROWID;
CREATE INDEX detections_station_time ON detections(station_id, aired_local);
CREATE INDEX detections_spot_time ON detections(spot, aired_local);
CREATE INDEX detections_advertiser_time ON detections(advertiser, aired_local);
CREATE INDEX detections_pair ON detections(recording_id, master_id);
CREATE INDEX detections_job ON detections(job_id);
CREATE INDEX placements_detection ON placements(detection_id);
CREATE INDEX placements_station_time ON placements(station_id, planned_local);
CREATE INDEX placements_plan ON placements(station_id, plan);
CREATE INDEX placements_spot_time ON placements(spot, planned_local);
CREATE INDEX placements_advertiser_time ON placements(advertiser, planned_local);
CREATE INDEX recordings_station_start ON recordings(station_id, start_local);
CREATE INDEX jobs_finished ON jobs(finished_utc);
)sql",
      // 3: search results kept for reuse, and files' digests by their stat.
      R"sql(
CREATE TABLE search_results(
  kind TEXT NOT NULL,                   -- 'search': a piece's matches; 'evidence': one detection's
  key_sha256 TEXT NOT NULL,             -- what was read (files by SHA-256, frames), owned, the options, the version
  master_sha256 TEXT NOT NULL,
  template_id TEXT NOT NULL,
  result_json TEXT NOT NULL,
  stored_utc INTEGER NOT NULL,
  PRIMARY KEY(kind, key_sha256, master_sha256, template_id)) WITHOUT ROWID;
CREATE TABLE file_digests(
  device INTEGER NOT NULL,
  inode INTEGER NOT NULL,
  size_bytes INTEGER NOT NULL,
  mtime_ns INTEGER NOT NULL,
  sha256 TEXT NOT NULL,
  path TEXT NOT NULL,                   -- where it was last seen (a rename keeps the rest)
  PRIMARY KEY(device, inode, size_bytes, mtime_ns)) WITHOUT ROWID;
CREATE INDEX search_results_stored ON search_results(stored_utc);
)sql",
      // 4: an airing's tempo (time-stretched with the pitch kept; 1 when
      // unchanged, and for every detection stored before it was measured).
      R"sql(
ALTER TABLE detections ADD COLUMN tempo REAL NOT NULL DEFAULT 1;
)sql",
      // 5: the recordings each kept search result read (by SHA-256), so
      // that retention can delete the results of recordings the record no
      // longer names (record_retention.h; results kept before have none
      // and stay).
      R"sql(
CREATE TABLE search_result_files(
  kind TEXT NOT NULL,
  key_sha256 TEXT NOT NULL,
  file_sha256 TEXT NOT NULL,
  PRIMARY KEY(kind, key_sha256, file_sha256)) WITHOUT ROWID;
CREATE INDEX search_result_files_file ON search_result_files(file_sha256);
CREATE INDEX recordings_sha256 ON recordings(sha256);
)sql",
  };
  return m;
}

Status migrate_store(SqliteDb& db, int target) {
  const auto& m = store_migrations();
  if (target < 0) target = static_cast<int>(m.size());
  auto version = db.scalar("PRAGMA user_version");
  if (!version) return version.error();
  if (version.value() > static_cast<int64_t>(m.size()))
    return Error{ErrorCode::usage,
                 "the store is at schema version " + std::to_string(version.value()) + ", newer than this build's " +
                     std::to_string(m.size()) + ": use a newer godwit",
                 db.path(), std::nullopt};
  for (int v = static_cast<int>(version.value()); v < target; ++v) {
    auto tx = SqliteTransaction::begin(db);
    if (!tx) return tx.error();
    // Another process may have migrated meanwhile: look again under the lock.
    auto now = db.scalar("PRAGMA user_version");
    if (!now) return now.error();
    if (now.value() > v) continue;
    if (auto st = db.exec(m[static_cast<size_t>(v)]); !st) return st.error();
    if (auto st = db.exec("PRAGMA user_version = " + std::to_string(v + 1)); !st) return st.error();
    if (auto st = tx.value()->commit(); !st) return st.error();
  }
  return ok_status();
}

}  // namespace godwit
