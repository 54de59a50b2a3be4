// Retention of the store of record with real SQLite files: the rows of old
// days go, exactly those, per station and on each station's clock; the
// rest is left as it was. Kept search results and file digests that
// nothing names any more go too.
#include "record_retention.h"

#include <doctest/doctest.h>

#include <ctime>
#include <filesystem>
#include <fstream>
#include <map>

#include "store_fixture.h"
#include "test_util.h"

namespace godwit {
namespace {

using test::synthetic_day;
using test::SyntheticDay;
using test::TempDir;

// Every row of the tables retention touches, as text, keyed by table and
// id: what must be left exactly as it was.
std::map<std::string, std::string> dump(RecordStore& store) {
  std::map<std::string, std::string> out;
  store.read([&](SqliteDb& db) {
    for (const char* sql :
         {"SELECT 'p' || id, slot || '|' || planned_local || '|' || status || '|' || ifnull(detection_id, '-') FROM placements",
          "SELECT 'd' || id, recording_id || '|' || master_id || '|' || aired_local || '|' || score FROM detections",
          "SELECT 'r' || id, path || '|' || start_local FROM recordings",
          "SELECT 's' || recording_id || '/' || master_id, job_id FROM searches",
          "SELECT 'j' || id, key FROM jobs", "SELECT 'm' || id, spot FROM masters"}) {
      auto st = db.prepare(sql);
      REQUIRE(st.ok());
      while (st.value().step().value()) out[st.value().text(0)] = st.value().text(1);
    }
    return 0;
  });
  return out;
}

int64_t count(RecordStore& store, const std::string& sql) {
  return store.read([&](SqliteDb& db) { return db.scalar(sql).value(); });
}

TEST_CASE("retention deletes exactly the rows of days older than each station's retention") {
  TempDir dir;
  auto opened = RecordStore::open_file(dir.file("store.sqlite"));
  REQUIRE(opened.ok());
  RecordStore& store = *opened.value();
  // Three fictional stations, ten days each (2026-03-01 .. 03-10), 200 airings a day.
  const std::map<std::string, std::string> zones = {
      {"kestrel-fm", ""},                     // no zone: its clock is UTC
      {"heron-radio", "Pacific/Kiritimati"},  // UTC+14 all year (IANA tz database; from memory)
      {"osprey-am", ""}};
  for (const auto& [station, zone] : zones)
    for (int d = 1; d <= 10; ++d) {
      SyntheticDay day;
      day.station = station;
      day.day = "2026-03-" + std::string(d < 10 ? "0" : "") + std::to_string(d);
      day.airings = 200;
      day.spots = 20;
      JobRecord job = synthetic_day(day);
      job.time_zone = zone;
      REQUIRE(store.write_job(job).ok());
    }
  REQUIRE(count(store, "SELECT count(*) FROM detections") == 3 * 10 * 200);
  const auto before = dump(store);

  // 2026-03-10T12:00:00Z. Kestrel keeps 5 days: today (03-10) and the five
  // before it, so 03-01 .. 03-04 go. Heron's clock reads 03-11 02:00 then
  // (UTC+14): 03-01 .. 03-05 go. Osprey keeps everything (0 days).
  const int64_t now_utc = 1773144000;  // date -u -d 2026-03-10T12:00:00Z +%s
  RetentionPolicy policy;
  policy.days = 5;
  policy.station_days["osprey-am"] = 0;
  auto counts = apply_retention(store, policy, now_utc);
  REQUIRE_MESSAGE(counts.ok(), (counts.ok() ? "" : counts.error().describe()));
  REQUIRE(counts.value().size() == 2);  // osprey-am: kept for ever, not visited
  std::map<std::string, RetentionCounts> by;
  for (const auto& c : counts.value()) by[c.station] = c;
  CHECK(by["kestrel-fm"].cut == "2026-03-05");
  CHECK(by["heron-radio"].cut == "2026-03-06");
  // Detections: whole days of 200 (every airing of a synthetic day is inside it).
  CHECK(by["kestrel-fm"].detections == 4 * 200);
  CHECK(by["heron-radio"].detections == 5 * 200);
  // Recordings: 24 an hour-file day; their searches (24 x 20 masters a day).
  CHECK(by["kestrel-fm"].recordings == 4 * 24);
  CHECK(by["heron-radio"].recordings == 5 * 24);
  CHECK(by["kestrel-fm"].searches == 4 * 24 * 20);
  CHECK(by["heron-radio"].searches == 5 * 24 * 20);
  // Jobs: those of the days gone (named by no row: the masters name the last day's job).
  CHECK(by["kestrel-fm"].jobs == 4);
  CHECK(by["heron-radio"].jobs == 5);

  const auto after = dump(store);
  // Nothing left before the cut; nothing kept changed; what went was before the cut.
  CHECK(count(store, "SELECT count(*) FROM detections d JOIN stations s ON s.id = d.station_id WHERE s.name = "
                     "'kestrel-fm' AND d.aired_local < " + std::to_string(*parse_iso8601_local("2026-03-05T00:00:00"))) == 0);
  CHECK(count(store, "SELECT count(*) FROM placements p JOIN stations s ON s.id = p.station_id WHERE s.name = "
                     "'heron-radio' AND p.planned_local < " + std::to_string(*parse_iso8601_local("2026-03-06T00:00:00"))) == 0);
  CHECK(count(store, "SELECT count(*) FROM detections d JOIN stations s ON s.id = d.station_id WHERE s.name = "
                     "'osprey-am'") == 10 * 200);
  size_t gone = 0;
  for (const auto& [key, row] : before) {
    auto it = after.find(key);
    if (it == after.end()) {
      ++gone;
      continue;
    }
    // A kept placement whose airing went keeps its verdict (ON DELETE SET NULL); none here.
    CHECK_MESSAGE(it->second == row, key);
  }
  CHECK(after.size() + gone == before.size());
  const int64_t placements_gone = by["kestrel-fm"].placements + by["heron-radio"].placements;
  CHECK(gone == static_cast<size_t>(placements_gone + by["kestrel-fm"].detections + by["heron-radio"].detections +
                                    by["kestrel-fm"].recordings + by["heron-radio"].recordings +
                                    by["kestrel-fm"].searches + by["heron-radio"].searches + by["kestrel-fm"].jobs +
                                    by["heron-radio"].jobs));
  CHECK(placements_gone > 9 * 150);  // about 190 a day; a few planned before their day's midnight
  CHECK(count(store, "SELECT count(*) FROM pragma_foreign_key_check") == 0);

  // Run again: nothing more goes.
  auto again = apply_retention(store, policy, now_utc);
  REQUIRE(again.ok());
  for (const auto& c : again.value()) CHECK(c.total() == 0);
}

TEST_CASE("retention deletes kept search results and file digests that no recording or master names any more") {
  TempDir dir;
  auto opened = RecordStore::open_file(dir.file("store.sqlite"));
  REQUIRE(opened.ok());
  RecordStore& store = *opened.value();
  SyntheticDay day;
  day.day = "2026-03-01";
  day.airings = 20;
  day.spots = 4;
  const JobRecord job = synthetic_day(day);
  REQUIRE(store.write_job(job).ok());
  const std::string named = job.recordings[0].sha256, other_named = job.recordings[1].sha256;
  const std::string unnamed = sha256_hex("an hour never recorded");
  REQUIRE(store.store_results({{"search", "k-named", "m", "spot-00", "{}", {named}},
                               {"search", "k-unnamed", "m", "spot-00", "{}", {unnamed}},
                               {"search", "k-unnamed", "m", "spot-01", "{}", {unnamed}},
                               {"evidence", "k-half", "m", "spot-00", "{}", {other_named, unnamed}},
                               {"families", "k-families", "", "", "{}", {}},
                               {"search", "k-before-schema-5", "m", "spot-00", "{}", {}}})
              .ok());
  auto rows = [&] { return count(store, "SELECT count(*) FROM search_results"); };
  auto digests = [&] { return count(store, "SELECT count(*) FROM file_digests"); };
  // Digests: a file named by nothing that is still there, one gone, one
  // changed, and one gone whose content is a master's (named).
  auto write = [&](const std::string& name, const std::string& bytes) {
    std::ofstream(dir.file(name), std::ios::binary) << bytes;
    REQUIRE(store.file_digest(dir.file(name)).ok());
  };
  write("there.wav", "still there");
  write("gone.wav", "gone");
  write("changed.wav", "changed");
  write("master.wav", "spot-00");  // masters[0].sha256 is sha256_hex("spot-00") (store_fixture.h)
  std::filesystem::remove(dir.file("gone.wav"));
  std::filesystem::remove(dir.file("master.wav"));
  std::ofstream(dir.file("changed.wav"), std::ios::binary) << "changed, longer now";
  REQUIRE(digests() == 4);

  const auto now = static_cast<int64_t>(std::time(nullptr));
  // Stored just now: younger than a day, none goes; the digests of files gone do.
  auto young = prune_kept_results(store, 1, now);
  REQUIRE(young.ok());
  CHECK(young.value().results == 0);
  CHECK(young.value().digests == 2);  // gone.wav, changed.wav
  CHECK(digests() == 2);
  CHECK(count(store, "SELECT count(*) FROM file_digests WHERE path LIKE '%there.wav'") == 1);
  CHECK(count(store, "SELECT count(*) FROM file_digests WHERE path LIKE '%master.wav'") == 1);
  // Two days on: the results that read a recording the record does not name go (k-unnamed's two masters,
  // k-half), with their file rows; the rest stay.
  auto old = prune_kept_results(store, 1, now + 2 * 86400);
  REQUIRE(old.ok());
  CHECK(old.value().results == 3);
  CHECK(old.value().result_files == 3);  // k-unnamed's one (both masters read it), k-half's two
  CHECK(rows() == 3);
  CHECK(count(store, "SELECT count(*) FROM search_results WHERE key_sha256 IN ('k-named', 'k-families', "
                     "'k-before-schema-5')") == 3);
  CHECK(count(store, "SELECT count(*) FROM search_result_files") == 1);
  // The day's recordings deleted by retention: k-named goes next time too.
  RetentionPolicy policy;
  policy.days = 5;
  REQUIRE(apply_retention(store, policy, 1773144000).ok());  // 2026-03-10T12:00:00Z
  CHECK(count(store, "SELECT count(*) FROM recordings") == 0);
  auto after = prune_kept_results(store, 1, now + 2 * 86400);
  REQUIRE(after.ok());
  CHECK(after.value().results == 1);
  CHECK(rows() == 2);  // families, and the row that names no recording
  // The master's digest stays while the master does.
  CHECK(count(store, "SELECT count(*) FROM file_digests WHERE path LIKE '%master.wav'") == 1);
}

}  // namespace
}  // namespace godwit
