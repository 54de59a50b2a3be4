// RecordStore: the store of record, one SQLite file (WAL mode) in the state
// directory, `STATE/store.sqlite`. Schema and migrations: store_schema.h.
//
// What it keeps: stations, recordings (path, start, duration, rate, codec,
// SHA-256 of the file), masters (spot id, SHA-256, title, advertiser,
// family), detections with their evidence, placements with their verdicts,
// and the job that wrote each row. A job's rows are written in one
// transaction (write_job): after a crash the store holds all of them or
// none.
//
// Re-running a job replaces rather than duplicates:
//   detections  keyed by recording (station, path, SHA-256) + master
//               (station, spot id, SHA-256) + offset to the millisecond.
//               A job that searched recording R for master M is the
//               authority on that pair: the pair's detections it did not
//               find again are deleted (a changed offset, an airing no
//               longer confirmed), the rest updated in place.
//   placements  keyed by station + slot + planned time (slot ids repeat
//               from one day's log to the next). A job's planned log
//               is the whole plan of the time it spans, from its first
//               planned placement to its last, and replaces what an
//               earlier run of a log of the same file name wrote on the
//               days it spans: the station's placements in that span, or
//               from that log on those days, are replaced by the job's. So a re-run of a day, or of its log
//               edited (slots removed, times moved), leaves no stale slot,
//               and a neighbouring day's plan is left alone even when a log
//               reaches just past midnight.
//   recordings, masters  upserted by their keys; a file whose content
//               changed is a new row (the old one keeps its detections).
//   searches    (recording, master, search-options fingerprint) upserted.
//
// Thread contract: safe for concurrent use. Writes go through one
// connection under a mutex; reads through another (WAL lets them run
// beside a write). Several processes may share the file: SQLite's locks and
// a busy timeout serialize their writes.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "godwit/compliance/civil_time.h"
#include "godwit/core/error.h"
#include "sqlite_db.h"

namespace godwit {

struct RecordingRow {
  std::string path;
  std::string sha256;  // lowercase hex; empty when the file could not be read
  int64_t size_bytes = 0;
  int64_t mtime_ns = 0;
  std::optional<LocalSeconds> start_local;
  double duration_s = 0;
  double rate_hz = 0;
  std::string codec;
  int channels = 0;
  std::string error;  // why it could not be read (wholly), if so
};

struct MasterRow {
  std::string spot;
  std::string sha256;
  std::string path;
  std::string title, advertiser, family;
  double length_s = 0;
};

struct DetectionRow {
  size_t recording = 0;  // index into JobRecord::recordings: the file where it starts
  std::string spot;      // the version detected: a JobRecord::masters spot
  double offset_s = 0;
  LocalSeconds aired_local = 0;
  double score = 0;
  int polarity = 1;
  double speed = 1;
  double tempo = 1;  // time-stretched with the pitch kept (speed_search.h)
  double coverage = 0;
  double length_s = 0;
  std::optional<double> foreground_contrast, spot_lufs, programme_lufs;
  std::string missing_json = "[]", unrecorded_json = "[]", versions_json = "[]", undetermined_json = "[]";
  std::string profile_json = "{}";
  bool unscheduled = false;
};

struct PlacementRow {
  std::string slot, spot, advertiser, title;
  LocalSeconds planned_local = 0;
  std::string planned;  // as the reports show it
  double window_s = 0;
  std::string status;   // verdict_name()
  std::optional<double> deviation_s;
  std::optional<size_t> detection;  // index into JobRecord::detections
  std::string detected_spot;
  std::string recorded_json = "[]", unrecorded_json = "[]";
  std::string suggestion;
};

// Everything one job writes.
struct JobRecord {
  std::string station;
  std::string time_zone;  // the station's, when known
  std::string key;        // unique: a daemon job id or one made for a command-line run
  std::string kind = "reconcile";
  std::string source;     // "cli", "daemon"
  std::string schedule;
  std::string software;   // godwit_version()
  std::string options_json = "{}";
  std::string summary_json = "{}";
  int64_t finished_utc = 0;
  std::string options_sha256;  // fingerprint of the search options (searches table)
  std::vector<RecordingRow> recordings;
  std::vector<MasterRow> masters;
  std::vector<DetectionRow> detections;
  std::vector<PlacementRow> placements;
  // The pairs searched: every recording without an error x every master.
  // Default: true.
  bool searched_all = true;
};

// A kept search result (stored_tasks.h).
struct StoredResult {
  std::string kind;  // "search", "evidence", "families" (stored_families.h)
  std::string key_sha256;
  std::string master_sha256;
  std::string template_id;
  std::string result_json;
  // The recordings it was read from, by SHA-256 (none for families):
  // what retention asks the record about (record_retention.h).
  std::vector<std::string> files;
};

struct StoreCounts {
  int64_t stations = 0, jobs = 0, recordings = 0, masters = 0, detections = 0, placements = 0, searches = 0;
};

class RecordStore {
 public:
  static constexpr const char* kFileName = "store.sqlite";

  // Opens STATE_DIR/store.sqlite, creating the folder and the file when
  // missing (unless !create: not_found), in WAL mode with synchronous=FULL
  // (a committed job survives a power loss), migrated to this build's
  // schema. Errors: io, not_found, usage (a store newer than this build).
  static Result<std::unique_ptr<RecordStore>> open(const std::string& state_dir, bool create = true);
  // The same on a file path; `schema_version` below this build's stops the
  // migrations there (for tests of migrations).
  static Result<std::unique_ptr<RecordStore>> open_file(const std::string& path, bool create = true,
                                                        int schema_version = -1);

  // Writes a job's rows in one transaction. `before_row` (tests: fault
  // injection) is called before each row with its table's name and
  // index; an error it returns aborts the job, leaving nothing of it.
  // Errors: io, usage (a job key already stored), internal (a detection
  // naming no master of the job).
  Status write_job(const JobRecord& job,
                   const std::function<Status(std::string_view table, size_t index)>& before_row = nullptr);

  // The SHA-256 stored for `path` of `station` when its size and
  // modification time are still these (so an unchanged hour file is not
  // read again); empty otherwise.
  std::optional<std::string> known_sha256(const std::string& station, const std::string& path, int64_t size_bytes,
                                          int64_t mtime_ns);

  // Kept search results (search_results.cc): the one of `kind` under
  // `key` for the master, if any; rows written in one transaction
  // (replacing rows of the same keys).
  std::optional<std::string> stored_result(const std::string& kind, const std::string& key_sha256,
                                           const std::string& master_sha256, const std::string& template_id);
  Status store_results(const std::vector<StoredResult>& rows);
  int64_t stored_results(const std::string& kind);
  // A file's SHA-256, read from the file_digests table while the file's
  // device, inode, size and modification time are unchanged (a rename
  // keeps them), else computed and kept. Errors: file_sha256's.
  Result<std::string> file_digest(const std::string& path);

  Result<StoreCounts> counts();
  int schema_version();
  const std::string& path() const { return path_; }

  // Runs `fn` on the read connection, under its lock.
  template <class F>
  auto read(F&& fn) {
    std::lock_guard lock(read_mu_);
    return fn(*reader_);
  }
  // Runs `fn` on the write connection, under its lock (upkeep such as
  // record_retention.h; `fn` makes its own transaction).
  template <class F>
  auto write(F&& fn) {
    std::lock_guard lock(write_mu_);
    return fn(*writer_);
  }

 private:
  RecordStore(std::unique_ptr<SqliteDb> writer, std::unique_ptr<SqliteDb> reader, std::string path)
      : writer_(std::move(writer)), reader_(std::move(reader)), path_(std::move(path)) {}
  Status write_rows(const JobRecord& job, const std::function<Status(std::string_view, size_t)>& before_row);
  std::mutex write_mu_;
  std::unique_ptr<SqliteDb> writer_;  // GUARDED_BY(write_mu_)
  std::mutex read_mu_;
  std::unique_ptr<SqliteDb> reader_;  // GUARDED_BY(read_mu_)
  std::string path_;
};

}  // namespace godwit
