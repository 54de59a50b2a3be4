#include "record_retention.h"

#include <sys/stat.h>

#include <chrono>
#include <algorithm>
#include <cmath>
#include <optional>

#include "godwit/compliance/civil_time.h"

namespace godwit {
namespace {

struct StationRow {
  int64_t id = 0;
  std::string name, time_zone;
};

constexpr double kDayS = 86400;

// The recordings of station ?1 that ended before the cut ?2.
constexpr const char* kOldRecordings =
    "SELECT id FROM recordings WHERE station_id = ?1 AND start_local IS NOT NULL AND start_local + duration_s <= ?2";

Result<int64_t> delete_rows(SqliteDb& db, const std::string& sql, int64_t station, double cut_local) {
  auto st = db.prepare(sql);
  if (!st) return st.error();
  st.value().bind(1, station);
  if (sql.find("?2") != std::string::npos) st.value().bind(2, cut_local);
  if (auto r = st.value().run(); !r) return r.error();
  return static_cast<int64_t>(db.changes());
}

// The rows of days before `cut` (local) of station `s`, in one transaction;
// with `jobs`, also the job rows no row names any more.
Status prune_before(SqliteDb& db, int64_t station, double cut, bool jobs, RetentionCounts& out) {
  auto tx = SqliteTransaction::begin(db);
  if (!tx) return tx.error();
  const std::string old_recordings = kOldRecordings;
  // Placements first (those naming a detection about to go are gone then,
  // or keep their verdict with the link cleared: ON DELETE SET NULL).
  const std::string steps[][2] = {
      {"DELETE FROM placements WHERE station_id = ?1 AND planned_local < ?2", "placements"},
      {"DELETE FROM detections WHERE station_id = ?1 AND aired_local < ?2", "detections"},
      {"DELETE FROM detections WHERE station_id = ?1 AND recording_id IN (" + old_recordings + ")", "detections"},
      {"DELETE FROM searches WHERE recording_id IN (" + old_recordings + ")", "searches"},
      {"DELETE FROM recordings WHERE id IN (" + old_recordings + ")", "recordings"},
      {"DELETE FROM jobs WHERE station_id = ?1 AND id NOT IN ("
       "SELECT job_id FROM recordings WHERE station_id = ?1 UNION SELECT job_id FROM masters WHERE station_id = ?1 "
       "UNION SELECT job_id FROM detections WHERE station_id = ?1 UNION SELECT job_id FROM placements WHERE "
       "station_id = ?1 UNION SELECT job_id FROM searches WHERE station_id = ?1)",
       "jobs"}};
  for (const auto& [sql, table] : steps) {
    if (table == "jobs" && !jobs) continue;
    auto n = delete_rows(db, sql, station, cut);
    if (!n) return n.error();  // the transaction rolls back
    int64_t* count = table == "placements"   ? &out.placements
                     : table == "detections" ? &out.detections
                     : table == "searches"   ? &out.searches
                     : table == "recordings" ? &out.recordings
                                             : &out.jobs;
    *count += n.value();
  }
  return tx.value()->commit();
}

// The oldest local time station `station` has a row at; empty when none.
Result<std::optional<double>> oldest_row(SqliteDb& db, int64_t station) {
  auto st = db.prepare(
      "SELECT min(t) FROM (SELECT min(planned_local) AS t FROM placements WHERE station_id = ?1 UNION ALL "
      "SELECT min(aired_local) FROM detections WHERE station_id = ?1 UNION ALL "
      "SELECT min(start_local) FROM recordings WHERE station_id = ?1)");
  if (!st) return st.error();
  st.value().bind(1, station);
  auto row = st.value().step();
  if (!row) return row.error();
  return row.value() ? st.value().optional_real(0) : std::nullopt;
}

// Days per transaction: a first pass over a year of a busy station holds
// the write lock a second or so at a time, not for the whole year (other
// writers wait on it: the daemon's jobs, a command line's busy timeout).
constexpr double kDaysPerTransaction = 7;

Status prune_station(RecordStore& store, const StationRow& s, double days, int64_t now_utc, RetentionCounts& out) {
  LocalSeconds local_now = static_cast<double>(now_utc);
  if (!s.time_zone.empty())
    if (auto tz = TimeZone::find(s.time_zone)) local_now = tz.value().local_from_utc(static_cast<double>(now_utc));
  const double cut = std::floor(local_now / kDayS) * kDayS - std::floor(days) * kDayS;
  out.station = s.name;
  out.cut = format_iso8601_local(cut, 0).substr(0, 10);
  const auto t0 = std::chrono::steady_clock::now();
  auto oldest = store.write([&](SqliteDb& db) { return oldest_row(db, s.id); });
  if (!oldest) return oldest.error();
  double upto = oldest.value() ? std::floor(*oldest.value() / kDayS) * kDayS : cut;
  for (;;) {
    upto = std::min(cut, upto + kDaysPerTransaction * kDayS);
    const bool last = upto >= cut;
    if (auto st = store.write([&](SqliteDb& db) { return prune_before(db, s.id, upto, last, out); }); !st) return st;
    if (last) break;
  }
  out.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return ok_status();
}

}  // namespace

Result<std::vector<RetentionCounts>> apply_retention(RecordStore& store, const RetentionPolicy& policy,
                                                     int64_t now_utc) {
  auto stations = store.write([&](SqliteDb& db) -> Result<std::vector<StationRow>> {
    std::vector<StationRow> list;
    auto st = db.prepare("SELECT id, name, time_zone FROM stations ORDER BY name");
    if (!st) return st.error();
    for (;;) {
      auto row = st.value().step();
      if (!row) return row.error();
      if (!row.value()) break;
      list.push_back({st.value().integer(0), st.value().text(1), st.value().text(2)});
    }
    return list;
  });
  if (!stations) return stations.error();
  std::vector<RetentionCounts> out;
  for (const auto& s : stations.value()) {
    const auto named = policy.station_days.find(s.name);
    const double days = named != policy.station_days.end() ? named->second : policy.days;
    if (!(days > 0) || !std::isfinite(days)) continue;  // kept for ever
    RetentionCounts c;
    if (auto st = prune_station(store, s, days, now_utc, c); !st) return st.error();
    out.push_back(c);
  }
  return out;
}

Result<KeptRetentionCounts> prune_kept_results(RecordStore& store, double unnamed_days, int64_t now_utc) {
  KeptRetentionCounts out;
  const auto cut_utc = static_cast<int64_t>(static_cast<double>(now_utc) - std::max(0.0, unnamed_days) * kDayS);
  auto st = store.write([&](SqliteDb& db) -> Status {
    auto tx = SqliteTransaction::begin(db);
    if (!tx) return tx.error();
    auto results = db.prepare(
        "DELETE FROM search_results WHERE kind IN ('search', 'evidence') AND stored_utc < ?1 AND EXISTS ("
        "SELECT 1 FROM search_result_files f WHERE f.kind = search_results.kind AND "
        "f.key_sha256 = search_results.key_sha256 AND NOT EXISTS ("
        "SELECT 1 FROM recordings r WHERE r.sha256 = f.file_sha256))");
    if (!results) return results.error();
    results.value().bind(1, cut_utc);
    if (auto r = results.value().run(); !r) return r;
    out.results = db.changes();
    auto files = db.prepare(
        "DELETE FROM search_result_files WHERE NOT EXISTS (SELECT 1 FROM search_results s WHERE "
        "s.kind = search_result_files.kind AND s.key_sha256 = search_result_files.key_sha256)");
    if (!files) return files.error();
    if (auto r = files.value().run(); !r) return r;
    out.result_files = db.changes();
    return tx.value()->commit();
  });
  if (!st) return st.error();
  // Digests named by nothing, whose file is no longer where it was seen.
  struct Digest {
    int64_t device, inode, size, mtime_ns;
    std::string path;
  };
  auto unnamed = store.read([&](SqliteDb& db) -> Result<std::vector<Digest>> {
    auto q = db.prepare(
        "SELECT device, inode, size_bytes, mtime_ns, path FROM file_digests d WHERE "
        "NOT EXISTS (SELECT 1 FROM recordings r WHERE r.sha256 = d.sha256) AND "
        "NOT EXISTS (SELECT 1 FROM masters m WHERE m.sha256 = d.sha256)");
    if (!q) return q.error();
    std::vector<Digest> list;
    for (;;) {
      auto row = q.value().step();
      if (!row) return row.error();
      if (!row.value()) break;
      list.push_back({q.value().integer(0), q.value().integer(1), q.value().integer(2), q.value().integer(3),
                      q.value().text(4)});
    }
    return list;
  });
  if (!unnamed) return unnamed.error();
  std::vector<const Digest*> gone;
  for (const auto& d : unnamed.value()) {
    struct stat sb {};
    const bool same = ::stat(d.path.c_str(), &sb) == 0 && static_cast<int64_t>(sb.st_dev) == d.device &&
                      static_cast<int64_t>(sb.st_ino) == d.inode && static_cast<int64_t>(sb.st_size) == d.size &&
                      static_cast<int64_t>(sb.st_mtim.tv_sec) * 1000000000 + sb.st_mtim.tv_nsec == d.mtime_ns;
    if (!same) gone.push_back(&d);
  }
  if (gone.empty()) return out;
  st = store.write([&](SqliteDb& db) -> Status {
    auto tx = SqliteTransaction::begin(db);
    if (!tx) return tx.error();
    auto del = db.prepare(
        "DELETE FROM file_digests WHERE device = ?1 AND inode = ?2 AND size_bytes = ?3 AND mtime_ns = ?4 AND path = ?5");
    if (!del) return del.error();
    for (const Digest* d : gone) {
      del.value().bind(1, d->device).bind(2, d->inode).bind(3, d->size).bind(4, d->mtime_ns).bind(5, d->path);
      if (auto r = del.value().run(); !r) return r;
      out.digests += db.changes();
      del.value().reset();
    }
    return tx.value()->commit();
  });
  if (!st) return st.error();
  return out;
}

}  // namespace godwit
