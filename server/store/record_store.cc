#include "record_store.h"

#include <cmath>
#include <filesystem>
#include <algorithm>
#include <map>

#include "store_schema.h"

namespace godwit {
namespace {

Status configure(SqliteDb& db) {
  // synchronous=FULL: WAL syncs at each commit, so a job acknowledged as
  // written survives a power loss, not only a crash of the process.
  return db.exec("PRAGMA foreign_keys = ON; PRAGMA synchronous = FULL;");
}

Result<int64_t> returned_id(SqliteStatement& st, SqliteDb& db, const char* what) {
  auto row = st.step();
  if (!row) {
    st.reset();
    return row.error();
  }
  if (!row.value()) {
    st.reset();
    return db.error(std::string("store: no id for ") + what);
  }
  const int64_t id = st.integer(0);
  st.reset();
  return id;
}

std::string day_of(LocalSeconds t) { return format_iso8601_local(t, 0).substr(0, 10); }

}  // namespace

Result<std::unique_ptr<RecordStore>> RecordStore::open(const std::string& state_dir, bool create) {
  if (create) {
    std::error_code ec;
    std::filesystem::create_directories(state_dir, ec);
    if (ec) return Error{ErrorCode::io, "cannot create the state directory: " + ec.message(), state_dir, std::nullopt};
  }
  return open_file((std::filesystem::path(state_dir) / kFileName).string(), create);
}

Result<std::unique_ptr<RecordStore>> RecordStore::open_file(const std::string& path, bool create, int schema_version) {
  auto writer = SqliteDb::open(path, create);
  if (!writer) return writer.error();
  SqliteDb& w = *writer.value();
  if (auto st = w.exec("PRAGMA journal_mode = WAL"); !st) return st.error();
  if (auto st = configure(w); !st) return st.error();
  if (auto st = migrate_store(w, schema_version); !st) return st.error();
  auto reader = SqliteDb::open(path, false);
  if (!reader) return reader.error();
  if (auto st = configure(*reader.value()); !st) return st.error();
  // History queries read rows scattered over the file (an advertiser's
  // airings across stations and days): map it and keep more pages cached
  // than the default 2 MiB.
  if (auto st = reader.value()->exec("PRAGMA mmap_size = 1073741824; PRAGMA cache_size = -65536"); !st) return st.error();
  return std::unique_ptr<RecordStore>(new RecordStore(std::move(writer.value()), std::move(reader.value()), path));
}

int RecordStore::schema_version() {
  std::lock_guard lock(read_mu_);
  auto v = reader_->scalar("PRAGMA user_version");
  return v ? static_cast<int>(v.value()) : -1;
}

Result<StoreCounts> RecordStore::counts() {
  std::lock_guard lock(read_mu_);
  StoreCounts c;
  std::pair<const char*, int64_t*> tables[] = {{"stations", &c.stations},     {"jobs", &c.jobs},
                                               {"recordings", &c.recordings}, {"masters", &c.masters},
                                               {"detections", &c.detections}, {"placements", &c.placements}};
  for (auto& [name, out] : tables) {
    auto n = reader_->scalar(std::string("SELECT count(*) FROM ") + name);
    if (!n) return n.error();
    *out = n.value();
  }
  auto has_searches = reader_->scalar("SELECT count(*) FROM sqlite_master WHERE name = 'searches'");
  if (has_searches && has_searches.value() > 0) {
    auto n = reader_->scalar("SELECT count(*) FROM searches");
    if (!n) return n.error();
    c.searches = n.value();
  }
  return c;
}

std::optional<std::string> RecordStore::known_sha256(const std::string& station, const std::string& path,
                                                     int64_t size_bytes, int64_t mtime_ns) {
  std::lock_guard lock(read_mu_);
  auto st = reader_->prepare(
      "SELECT r.sha256 FROM recordings r JOIN stations s ON s.id = r.station_id WHERE s.name = ?1 AND r.path = ?2 "
      "AND r.size_bytes = ?3 AND r.mtime_ns = ?4 AND r.sha256 <> '' ORDER BY r.id DESC LIMIT 1");
  if (!st) return std::nullopt;
  st.value().bind(1, station).bind(2, path).bind(3, size_bytes).bind(4, mtime_ns);
  auto row = st.value().step();
  if (!row || !row.value()) return std::nullopt;
  return st.value().text(0);
}

Status RecordStore::write_job(const JobRecord& job, const std::function<Status(std::string_view, size_t)>& before_row) {
  std::lock_guard lock(write_mu_);
  auto tx = SqliteTransaction::begin(*writer_);
  if (!tx) return tx.error();
  if (auto st = write_rows(job, before_row); !st) return st;  // the transaction rolls back
  return tx.value()->commit();
}

Status RecordStore::write_rows(const JobRecord& job, const std::function<Status(std::string_view, size_t)>& before_row) {
  SqliteDb& db = *writer_;
  auto hook = [&](std::string_view table, size_t i) -> Status { return before_row ? before_row(table, i) : ok_status(); };
  auto prep = [&](const std::string& sql) { return db.prepare(sql); };

  // Station.
  auto station_st = prep(
      "INSERT INTO stations(name, time_zone) VALUES(?1, ?2) ON CONFLICT(name) DO UPDATE SET time_zone = "
      "CASE WHEN excluded.time_zone <> '' THEN excluded.time_zone ELSE time_zone END RETURNING id");
  if (!station_st) return station_st.error();
  station_st.value().bind(1, job.station).bind(2, job.time_zone);
  auto station = returned_id(station_st.value(), db, "the station");
  if (!station) return station.error();

  // Job.
  {
    auto seen = prep("SELECT count(*) FROM jobs WHERE key = ?1");
    if (!seen) return seen.error();
    seen.value().bind(1, job.key);
    auto row = seen.value().step();
    if (!row) return row.error();
    if (seen.value().integer(0) > 0)
      return Error{ErrorCode::usage, "the store already holds job " + job.key, db.path(), std::nullopt};
  }
  if (auto st = hook("jobs", 0); !st) return st;
  auto job_st = prep(
      "INSERT INTO jobs(key, station_id, kind, source, schedule, software, options_json, summary_json, finished_utc) "
      "VALUES(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9) RETURNING id");
  if (!job_st) return job_st.error();
  job_st.value()
      .bind(1, job.key)
      .bind(2, station.value())
      .bind(3, job.kind)
      .bind(4, job.source)
      .bind(5, job.schedule)
      .bind(6, job.software)
      .bind(7, job.options_json)
      .bind(8, job.summary_json)
      .bind(9, job.finished_utc);
  auto job_id = returned_id(job_st.value(), db, "the job");
  if (!job_id) return job_id.error();

  // Recordings.
  auto rec_st = prep(
      "INSERT INTO recordings(station_id, path, sha256, size_bytes, mtime_ns, start_local, duration_s, rate_hz, codec, "
      "channels, error, job_id) VALUES(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12) "
      "ON CONFLICT(station_id, path, sha256) DO UPDATE SET size_bytes = excluded.size_bytes, mtime_ns = "
      "excluded.mtime_ns, start_local = excluded.start_local, duration_s = excluded.duration_s, rate_hz = "
      "excluded.rate_hz, codec = excluded.codec, channels = excluded.channels, error = excluded.error, job_id = "
      "excluded.job_id RETURNING id");
  if (!rec_st) return rec_st.error();
  std::vector<int64_t> recording_ids;
  for (size_t i = 0; i < job.recordings.size(); ++i) {
    if (auto st = hook("recordings", i); !st) return st;
    const RecordingRow& r = job.recordings[i];
    rec_st.value()
        .bind(1, station.value())
        .bind(2, r.path)
        .bind(3, r.sha256)
        .bind(4, r.size_bytes)
        .bind(5, r.mtime_ns)
        .bind(6, r.start_local)
        .bind(7, r.duration_s)
        .bind(8, r.rate_hz)
        .bind(9, r.codec)
        .bind(10, r.channels)
        .bind(11, r.error)
        .bind(12, job_id.value());
    auto id = returned_id(rec_st.value(), db, "a recording");
    if (!id) return id.error();
    recording_ids.push_back(id.value());
  }

  // Masters.
  auto master_st = prep(
      "INSERT INTO masters(station_id, spot, sha256, path, title, advertiser, family, length_s, job_id) "
      "VALUES(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9) ON CONFLICT(station_id, spot, sha256) DO UPDATE SET path = "
      "excluded.path, title = excluded.title, advertiser = excluded.advertiser, family = excluded.family, length_s = "
      "excluded.length_s, job_id = excluded.job_id RETURNING id");
  if (!master_st) return master_st.error();
  std::map<std::string, int64_t> master_ids;
  std::map<std::string, const MasterRow*> master_rows;
  for (size_t i = 0; i < job.masters.size(); ++i) {
    if (auto st = hook("masters", i); !st) return st;
    const MasterRow& m = job.masters[i];
    master_st.value()
        .bind(1, station.value())
        .bind(2, m.spot)
        .bind(3, m.sha256)
        .bind(4, m.path)
        .bind(5, m.title)
        .bind(6, m.advertiser)
        .bind(7, m.family)
        .bind(8, m.length_s)
        .bind(9, job_id.value());
    auto id = returned_id(master_st.value(), db, "a master");
    if (!id) return id.error();
    master_ids[m.spot] = id.value();
    master_rows[m.spot] = &m;
  }

  // Detections: upserted by (recording, master, offset to the ms). A store
  // opened at an older schema (tests, and a store being migrated) has no
  // tempo column: the value is then left out.
  auto has_tempo = db.scalar("SELECT count(*) FROM pragma_table_info('detections') WHERE name = 'tempo'");
  if (!has_tempo) return has_tempo.error();
  const bool tempo_column = has_tempo.value() > 0;
  auto det_st = prep(
      std::string("INSERT INTO detections(station_id, recording_id, master_id, job_id, spot, advertiser, offset_ms, "
                  "offset_s, aired_local, score, polarity, speed, coverage, length_s, foreground_contrast, spot_lufs, "
                  "programme_lufs, missing_json, unrecorded_json, versions_json, undetermined_json, profile_json, "
                  "unscheduled") +
      (tempo_column ? ", tempo" : "") +
      ") VALUES(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18, ?19, ?20, ?21, ?22, "
      "?23" +
      (tempo_column ? ", ?24" : "") +
      ") "
      "ON CONFLICT(recording_id, master_id, offset_ms) DO UPDATE SET job_id = excluded.job_id, spot = excluded.spot, "
      "advertiser = excluded.advertiser, offset_s = excluded.offset_s, aired_local = excluded.aired_local, score = "
      "excluded.score, polarity = excluded.polarity, speed = excluded.speed, coverage = excluded.coverage, length_s = "
      "excluded.length_s, foreground_contrast = excluded.foreground_contrast, spot_lufs = excluded.spot_lufs, "
      "programme_lufs = excluded.programme_lufs, missing_json = excluded.missing_json, unrecorded_json = "
      "excluded.unrecorded_json, versions_json = excluded.versions_json, undetermined_json = "
      "excluded.undetermined_json, profile_json = excluded.profile_json, unscheduled = excluded.unscheduled" +
      (tempo_column ? ", tempo = excluded.tempo" : "") + " RETURNING id");
  if (!det_st) return det_st.error();
  std::vector<int64_t> detection_ids;
  for (size_t i = 0; i < job.detections.size(); ++i) {
    if (auto st = hook("detections", i); !st) return st;
    const DetectionRow& d = job.detections[i];
    auto m = master_ids.find(d.spot);
    if (m == master_ids.end() || d.recording >= recording_ids.size())
      return Error{ErrorCode::internal, "store: detection " + std::to_string(i) + " names no master or recording of its job",
                   db.path(), std::nullopt};
    det_st.value()
        .bind(1, station.value())
        .bind(2, recording_ids[d.recording])
        .bind(3, m->second)
        .bind(4, job_id.value())
        .bind(5, d.spot)
        .bind(6, master_rows[d.spot]->advertiser)
        .bind(7, static_cast<int64_t>(std::llround(d.offset_s * 1000)))
        .bind(8, d.offset_s)
        .bind(9, d.aired_local)
        .bind(10, d.score)
        .bind(11, d.polarity)
        .bind(12, d.speed)
        .bind(13, d.coverage)
        .bind(14, d.length_s)
        .bind(15, d.foreground_contrast)
        .bind(16, d.spot_lufs)
        .bind(17, d.programme_lufs)
        .bind(18, d.missing_json)
        .bind(19, d.unrecorded_json)
        .bind(20, d.versions_json)
        .bind(21, d.undetermined_json)
        .bind(22, d.profile_json)
        .bind(23, d.unscheduled ? 1 : 0);
    if (tempo_column) det_st.value().bind(24, d.tempo);
    auto id = returned_id(det_st.value(), db, "a detection");
    if (!id) return id.error();
    detection_ids.push_back(id.value());
  }

  // The pairs this job searched: their detections not found again go, and
  // the search is noted with the options' fingerprint.
  if (job.searched_all) {
    auto sweep = prep("DELETE FROM detections WHERE recording_id = ?1 AND master_id = ?2 AND job_id <> ?3");
    if (!sweep) return sweep.error();
    auto has_searches = db.scalar("SELECT count(*) FROM sqlite_master WHERE name = 'searches'");
    if (!has_searches) return has_searches.error();
    std::optional<SqliteStatement> search_st;
    if (has_searches.value() > 0) {
      auto s = prep(
          "INSERT INTO searches(recording_id, master_id, options_sha256, station_id, job_id, searched_utc) "
          "VALUES(?1, ?2, ?3, ?4, ?5, ?6) ON CONFLICT(recording_id, master_id, options_sha256) DO UPDATE SET job_id = "
          "excluded.job_id, searched_utc = excluded.searched_utc");
      if (!s) return s.error();
      search_st = std::move(s.value());
    }
    size_t pair = 0;
    for (size_t r = 0; r < job.recordings.size(); ++r) {
      if (!job.recordings[r].error.empty()) continue;
      for (const auto& [spot, master] : master_ids) {
        if (auto st = hook("searches", pair++); !st) return st;
        sweep.value().bind(1, recording_ids[r]).bind(2, master).bind(3, job_id.value());
        if (auto st = sweep.value().run(); !st) return st;
        if (search_st) {
          search_st->bind(1, recording_ids[r])
              .bind(2, master)
              .bind(3, job.options_sha256)
              .bind(4, station.value())
              .bind(5, job_id.value())
              .bind(6, job.finished_utc);
          if (auto st = search_st->run(); !st) return st;
        }
      }
    }
  }

  // Placements: the station's plan over the span the job's log covers
  // (first to last planned time), and what an earlier run of the same log
  // wrote, are replaced by the job's.
  const std::string plan = std::filesystem::path(job.schedule).filename().string();
  if (!job.placements.empty()) {
    LocalSeconds first = job.placements.front().planned_local, last = first;
    for (const auto& p : job.placements) {
      first = std::min(first, p.planned_local);
      last = std::max(last, p.planned_local);
    }
    // The days the log touches, whole: where an earlier run of it may have
    // left slots its edit moved or removed (a log of the same name for
    // other days, "today.csv" reused, is left alone).
    const LocalSeconds first_day = std::floor(first / 86400) * 86400, end_day = std::floor(last / 86400) * 86400 + 86400;
    auto clear = prep(
        "DELETE FROM placements WHERE station_id = ?1 AND ((planned_local >= ?2 AND planned_local <= ?3) OR "
        "(plan = ?4 AND plan <> '' AND planned_local >= ?5 AND planned_local < ?6))");
    if (!clear) return clear.error();
    clear.value().bind(1, station.value()).bind(2, first).bind(3, last).bind(4, plan).bind(5, first_day).bind(6, end_day);
    if (auto st = clear.value().run(); !st) return st;
  }
  auto place_st = prep(
      "INSERT INTO placements(station_id, job_id, day, slot, spot, advertiser, title, planned_local, planned, window_s, "
      "status, deviation_s, detection_id, detected_spot, recorded_json, unrecorded_json, suggestion, plan) "
      "VALUES(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18) "
      "ON CONFLICT(station_id, slot, planned_local) DO UPDATE SET job_id = excluded.job_id, day = excluded.day, spot = "
      "excluded.spot, advertiser = excluded.advertiser, title = excluded.title, planned = excluded.planned, "
      "window_s = excluded.window_s, status = excluded.status, deviation_s = excluded.deviation_s, detection_id = "
      "excluded.detection_id, detected_spot = excluded.detected_spot, recorded_json = excluded.recorded_json, "
      "unrecorded_json = excluded.unrecorded_json, suggestion = excluded.suggestion, plan = excluded.plan");
  if (!place_st) return place_st.error();
  for (size_t i = 0; i < job.placements.size(); ++i) {
    if (auto st = hook("placements", i); !st) return st;
    const PlacementRow& p = job.placements[i];
    auto& s = place_st.value();
    s.bind(1, station.value())
        .bind(2, job_id.value())
        .bind(3, day_of(p.planned_local))
        .bind(4, p.slot)
        .bind(5, p.spot)
        .bind(6, p.advertiser)
        .bind(7, p.title)
        .bind(8, p.planned_local)
        .bind(9, p.planned)
        .bind(10, p.window_s)
        .bind(11, p.status)
        .bind(12, p.deviation_s)
        .bind(14, p.detected_spot)
        .bind(15, p.recorded_json)
        .bind(16, p.unrecorded_json)
        .bind(17, p.suggestion)
        .bind(18, plan);
    if (p.detection && *p.detection < detection_ids.size()) s.bind(13, detection_ids[*p.detection]);
    else s.bind_null(13);
    if (auto st = s.run(); !st) return st;
  }
  return ok_status();
}

}  // namespace godwit
